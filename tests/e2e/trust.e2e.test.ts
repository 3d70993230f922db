// What makes a trim trustworthy, tried in the real renderer as a technician would: a reading that
// is not the unit's answer to the stimulus cannot be recorded; warnings describe the present and
// leave a log; a reading is recordable within seconds of a move, with the time left shown.

import { afterAll, describe, expect, it } from 'vitest';
import { mkdtempSync, rmSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import type { Page } from 'playwright-core';
import { acknowledgeNotice, openBench, type Bench, POLL } from '../harness/bench-harness.ts';
import { writeToneWav } from '../support/wav-files.ts';
import { DEMO_PROCEDURE } from '../../shared/procedures/demo-procedure.ts';

const benches: Bench[] = [];
const folder = mkdtempSync(join(tmpdir(), 'trimbench-trust-'));
afterAll(async () => {
  for (const bench of benches) await bench.close();
  rmSync(folder, { recursive: true, force: true });
});

async function benchWith(captureWav: string | null): Promise<Bench> {
  const bench = await openBench({ captureWav });
  benches.push(bench);
  return bench;
}

type ReadingJson = { sequence: number; settled: boolean; flags: string[]; fundamental: { frequencyHz: number; levelDbfs: number } };
const latest = async (page: Page) => JSON.parse((await page.getByTestId('reading-json').getAttribute('data-reading'))!) as ReadingJson;
const rows = (page: Page) => page.getByTestId('trim-points').locator('tbody tr');

async function openUnit(page: Page, serial: string, { oneClock = false, demo = false } = {}) {
  // With no capture device the demo bench becomes the input once the devices are listed.
  if (demo) await expect.poll(() => page.getByTestId('input-select').inputValue(), POLL).toBe('demo-bench');
  if (oneClock) await page.getByLabel(/one interface \(one clock\)/).check();
  await page.getByRole('button', { name: 'Start capture' }).click();
  await expect.poll(() => page.getByTestId('capture-status').isVisible(), POLL).toBe(true);
  await page.getByLabel('Operator').fill('A. Tester');
  await page.getByTestId('serial-input').fill(serial);
  await page.getByTestId('serial-input').press('Enter');
  await acknowledgeNotice(page);
  await expect.poll(() => page.getByTestId('run-serial').textContent(), POLL).toBe(serial);
  await page.getByTestId('position-input').press('g'); // the generator key works from the position field
  await expect.poll(() => page.getByTestId('trim-generator').textContent(), POLL).toMatch(/Generator ON/);
}

async function waitSettled(page: Page) {
  await page.waitForFunction(
    () => JSON.parse(document.querySelector('[data-testid=reading-json]')?.getAttribute('data-reading') ?? '{}').settled === true,
    undefined,
    { timeout: 60_000 },
  );
}

/** Waits for a settled reading at the typed position, presses Enter, and expects a new row. */
async function recordHere(page: Page) {
  const before = await rows(page).count();
  await expect
    .poll(async () => {
      await waitSettled(page);
      await page.getByTestId('position-input').press('Enter');
      return rows(page).count();
    }, { timeout: 60_000, interval: 500 })
    .toBe(before + 1);
}

describe('a reading that is not the unit’s answer to the stimulus', () => {
  // The generator plays the procedure's 14 Hz; the capture holds another source entirely, as with
  // a wrong input channel: a clean tone 16 dB below the expected level and 10 % off in frequency.
  it('is named in the readout and cannot be recorded, and the stimulus stays at the procedure’s frequency', { timeout: 120_000 }, async () => {
    const wav = writeToneWav(join(folder, 'other-source.wav'), { frequencyHz: 15.5, levelDbfs: -28, seconds: 2 });
    const page = await (await benchWith(wav)).openApp();
    await openUnit(page, 'MG20-2611-0201', { oneClock: true });

    // One clock: a coherent frequency may be chosen, but only within the stated 1 % of 14 Hz
    // (DEFAULT_MAX_OFFSET_PERCENT; otherwise 14 Hz exactly, windowed).
    const playing = Number(/([\d.]+) Hz at/.exec((await page.getByTestId('trim-generator').textContent())!)![1]);
    expect(Math.abs(playing - DEMO_PROCEDURE.trim.stimulusHz) / DEMO_PROCEDURE.trim.stimulusHz).toBeLessThanOrEqual(0.01);

    await expect.poll(async () => (await latest(page)).sequence, { timeout: 30_000 }).toBeGreaterThan(3);
    await expect.poll(() => page.getByTestId('stimulus-problem').textContent(), POLL).toMatch(/not the generator/);
    for (let i = 0; i < 3; i++) {
      await page.getByTestId('position-input').press('Enter');
      await page.waitForTimeout(700);
    }
    expect(await rows(page).count()).toBe(0);
    await expect.poll(() => page.getByTestId('trim-message').textContent(), POLL).toMatch(/not the generator/);
    expect(await page.getByTestId('finish-run').isDisabled()).toBe(true);
  });

  it('at the right frequency but far below the procedure’s level window is refused too', { timeout: 120_000 }, async () => {
    // 14 Hz at −28 dBFS: the demo procedure expects −15 to −9 dBFS at this step (invented values).
    const wav = writeToneWav(join(folder, 'too-low.wav'), { frequencyHz: 14, levelDbfs: -28, seconds: 1 });
    const page = await (await benchWith(wav)).openApp();
    await openUnit(page, 'MG20-2611-0202');
    await expect.poll(() => page.getByTestId('stimulus-problem').textContent(), { timeout: 30_000 }).toMatch(/below/);
    await page.getByTestId('position-input').press('Enter');
    await page.waitForTimeout(700);
    expect(await rows(page).count()).toBe(0);
  });
});

describe('on the demo bench (simulated unit, invented values)', () => {
  it('shows the time left after a move and records the first settled reading without refusal', { timeout: 180_000 }, async () => {
    const page = await (await benchWith(null)).openApp();
    await openUnit(page, 'MG20-2611-0203', { demo: true });
    await recordHere(page); // the safe end
    await page.getByTestId('position-input').press('ArrowUp'); // one 0.25-turn step
    // Straight after the move: not settled, and a time left of a few seconds is shown (the headless
    // bench measures 1.8 s of simulated time for such a move; the issue asks for at most 3 s).
    await expect.poll(() => page.getByTestId('settle-time').textContent(), POLL).toMatch(/About [1-3] s to settled/);
    expect((await latest(page)).settled).toBe(false);
    await waitSettled(page);
    const before = await rows(page).count();
    await page.getByTestId('position-input').press('Enter');
    // A reading shown as settled is one Enter records: no "still includes the previous position".
    await expect.poll(() => rows(page).count(), POLL).toBe(before + 1);
  });

  it('raises past-null at 7 turns, clears it back on the safe side without flicker, and logs both', { timeout: 240_000 }, async () => {
    const bench = await benchWith(null);
    const page = await bench.openApp();
    await openUnit(page, 'MG20-2611-0204', { demo: true });
    // Three points as the assistant directs them: enough for a fit whose null (the simulator's
    // true null is 130/26 = 5.00 turns) lies well inside the range.
    await recordHere(page);
    for (let i = 0; i < 2; i++) {
      await page.getByTestId('use-next').click();
      await recordHere(page);
    }
    await page.getByTestId('position-input').fill('7');
    await expect.poll(() => page.locator('[data-warning=past-null]').count(), POLL).toBe(1);
    // Left there, the simulated stage breaks into a slow oscillation, and the banner says so.
    await expect.poll(() => page.locator('[data-warning=lf-instability]').textContent(), { timeout: 30_000 }).toMatch(/oscillating/);

    await page.getByTestId('position-input').fill('4.9');
    // Gone with the move itself: a new frame takes at least 1.5 s (65536 samples at 44.1 kHz), so a
    // banner that waited for one would still name 7 turns here.
    await expect.poll(() => page.locator('[data-warning=past-null]').count(), { timeout: 1200, interval: 100 }).toBe(0);
    // Whatever the oscillation left behind clears once it has died away (sub-audio window ~5.5 s).
    await expect.poll(() => page.getByTestId('no-warnings').isVisible(), { timeout: 60_000, interval: 500 }).toBe(true);
    // And stays clear: sampled four times a second for ten seconds at a setting short of the null.
    for (let i = 0; i < 40; i++) {
      expect(await page.getByTestId('no-warnings').isVisible()).toBe(true);
      await page.waitForTimeout(250);
    }
    const log = bench.station.db
      .prepare("SELECT warning_id, change, position FROM warning_changes WHERE warning_id = 'past-null' ORDER BY id")
      .all() as { warning_id: string; change: string; position: number }[];
    expect(log).toEqual([
      { warning_id: 'past-null', change: 'raised', position: 7 },
      { warning_id: 'past-null', change: 'cleared', position: 4.9 },
    ]);
  });
});
