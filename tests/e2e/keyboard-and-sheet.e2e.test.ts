// The trim without a mouse on the demo bench (no stray Enter mutes or records), and the unit
// sheet's pages: one A4 page for a typical run, the serial and "page x of y" on every page of a
// longer one. Checked on the PDF's text (poppler's pdftotext), the way a reader of the file sees it.

import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { execFileSync } from 'node:child_process';
import { copyFileSync } from 'node:fs';
import type { Page } from 'playwright-core';
import { openBench, type Bench, POLL } from '../harness/bench-harness.ts';
import { readingWithThd } from '../support/station.ts';

let bench: Bench;
beforeAll(async () => {
  bench = await openBench({ captureWav: null }); // the demo bench is the input
});
afterAll(() => bench?.close());

const focusedTestId = (page: Page) => page.evaluate(() => document.activeElement?.getAttribute('data-testid') ?? null);
const latest = async (page: Page) => JSON.parse((await page.getByTestId('reading-json').getAttribute('data-reading'))!) as { sequence: number; settled: boolean };
const generatorOn = async (page: Page) => (await page.getByTestId('mute').textContent())!.startsWith('Mute generator');

async function openUnitByKeyboard(page: Page, serial: string) {
  await page.getByLabel('Operator').focus();
  await page.keyboard.type('A. Tester');
  await page.getByTestId('serial-input').focus();
  await page.keyboard.type(serial);
  await page.keyboard.press('Enter');
  await expect.poll(() => page.getByTestId('run-serial').textContent(), POLL).toBe(serial);
}

describe('the trim from the keyboard', () => {
  it('turns the generator on without leaving focus where Enter would mute it, and never records an unsettled reading on Enter', { timeout: 180_000 }, async () => {
    const page = await bench.openApp();
    await expect.poll(() => page.getByTestId('input-select').inputValue(), { timeout: 10_000 }).toBe('demo-bench');
    await page.getByRole('button', { name: 'Start capture' }).focus();
    await page.keyboard.press('Enter');
    await expect.poll(() => page.getByTestId('capture-status').isVisible(), POLL).toBe(true);
    await openUnitByKeyboard(page, 'MG20-2611-0101');
    expect(await focusedTestId(page)).toBe('position-input');

    // On from the generator panel's own button, by keyboard: focus goes back to the position field,
    // so the next Enter is the record key, not "Turn off".
    await page.getByTestId('generator-toggle').focus();
    await page.keyboard.press('Enter');
    await expect.poll(() => generatorOn(page), POLL).toBe(true);
    expect(await focusedTestId(page)).toBe('position-input');
    await page.keyboard.press('Enter');
    expect(await generatorOn(page)).toBe(true);

    // G (shown in the trim step) turns it off and on from the position field.
    await page.keyboard.press('g');
    await expect.poll(() => generatorOn(page), POLL).toBe(false);
    await page.keyboard.press('g');
    await expect.poll(() => generatorOn(page), POLL).toBe(true);

    // Enter pressed every 1.5 s straight after a move: whatever it records must be settled.
    await page.getByTestId('position-input').fill('1');
    for (let i = 0; i < 6; i++) {
      await page.waitForTimeout(1500); // pacing a technician's key presses, not a timing assertion
      await page.getByTestId('position-input').press('Enter');
    }
    const settledFlags = bench.station.db.prepare('SELECT settled FROM trim_points').all() as { settled: number }[];
    expect(settledFlags.every((p) => p.settled === 1)).toBe(true);

    // The deliberate action: its own button and a confirmation that holds the focus on Cancel, so
    // a stray Enter there records nothing.
    let recordedUnsettled = false;
    // After a move the meter waits for a frame holding only the new position, then needs three
    // agreeing readings: a reading is recordable but unsettled for about a sixth of a second, so
    // the technician may need a few tries to catch one.
    for (const position of ['1.5', '2', '2.5', '3', '3.25', '3.5', '3.75', '4', '4.25', '4.5'] as const) {
      if (recordedUnsettled) break;
      await page.getByTestId('position-input').fill(position);
      const movedAt = (await latest(page)).sequence;
      // The page counts the first reading after a move as possibly still the old position.
      await page.waitForFunction((after) => JSON.parse(document.querySelector('[data-testid=reading-json]')!.getAttribute('data-reading')!).sequence >= after + 2, movedAt, { polling: 10 });
      if ((await latest(page)).settled || !(await page.getByTestId('record-unsettled').isVisible())) continue;
      await page.getByTestId('record-unsettled').click();
      if (!(await page.getByTestId('unsettled-confirm').isVisible())) continue;
      const before = (bench.station.db.prepare('SELECT COUNT(*) AS n FROM trim_points').get() as { n: number }).n;
      await page.keyboard.press('Enter'); // lands on Cancel
      await expect.poll(() => page.getByTestId('unsettled-confirm').count(), POLL).toBe(0);
      expect((bench.station.db.prepare('SELECT COUNT(*) AS n FROM trim_points').get() as { n: number }).n).toBe(before);
      if ((await latest(page)).settled) continue;
      await page.getByTestId('record-unsettled').click();
      await page.getByTestId('confirm-unsettled').click();
      await expect.poll(() => page.getByTestId('trim-points').textContent(), POLL).toMatch(/unsettled/);
      recordedUnsettled = true;
    }
    expect(recordedUnsettled).toBe(true);
    expect(await focusedTestId(page)).toBe('position-input');

    // Closing the unit mutes the generator and sends the keyboard to the serial field.
    await page.getByTestId('close-unit').focus();
    await page.keyboard.press('Enter');
    await expect.poll(() => generatorOn(page), POLL).toBe(false);
    await expect.poll(() => focusedTestId(page), POLL).toBe('serial-input');
  });

  it('after Finish lands on the sheet’s Print, and back from the sheet on the serial field', { timeout: 120_000 }, async () => {
    const page = await bench.openApp();
    await expect.poll(() => page.getByTestId('input-select').inputValue(), { timeout: 10_000 }).toBe('demo-bench');
    await page.getByRole('button', { name: 'Start capture' }).click();
    await expect.poll(() => page.getByTestId('capture-status').isVisible(), POLL).toBe(true);
    await openUnitByKeyboard(page, 'MG20-2611-0102');
    await page.keyboard.press('g');
    await page.waitForFunction(() => JSON.parse(document.querySelector('[data-testid=reading-json]')?.getAttribute('data-reading') ?? '{}').settled === true, undefined, { timeout: 60_000 });
    const rows = page.getByTestId('trim-points').locator('tbody tr');
    await expect.poll(async () => (await page.getByTestId('position-input').press('Enter'), rows.count()), { timeout: 30_000, interval: 1500 }).toBe(1);
    await page.getByTestId('finish-run').focus();
    await page.keyboard.press('Enter');
    // One point is no trim: Finish is refused with the reasons, and the focus sits on "Keep
    // trimming", so a stray Enter does not fail the unit.
    await expect.poll(() => page.getByTestId('finish-refusal').isVisible(), POLL).toBe(true);
    await page.keyboard.press('Enter');
    await expect.poll(() => page.getByTestId('finish-refusal').count(), POLL).toBe(0);
    expect(await page.getByTestId('sheet-verdict').count()).toBe(0);
    await page.getByTestId('finish-run').focus();
    await page.keyboard.press('Enter');
    await page.getByTestId('finish-as-fail').focus();
    await page.keyboard.press('Enter');
    await expect.poll(() => page.getByTestId('sheet-verdict').isVisible(), POLL).toBe(true);
    expect(await page.getByTestId('sheet-verdict').textContent()).toBe('FAIL');
    await expect.poll(() => focusedTestId(page), POLL).toBe('sheet-print');
    await expect.poll(() => page.getByTestId('sheet-pdf-path').textContent(), { timeout: 20_000 }).toMatch(/^Saved as /);
    await page.getByTestId('sheet-back').focus();
    await page.keyboard.press('Enter');
    await expect.poll(() => focusedTestId(page), POLL).toBe('serial-input');
    expect(await generatorOn(page)).toBe(false);
  });
});

// Points on the phasor model of design §5 (H3 = s·(p − p0) + j·f, a straight line in the complex
// plane): null at p0 = 5 turns, −40 dBc at the safe end, −75 dBc at the null. All short of the null.
function trimReading(position: number) {
  const s = 10 ** (-40 / 20) / 5;
  const f = 10 ** (-75 / 20);
  const re = s * (position - 5);
  const levelDbc = 20 * Math.log10(Math.hypot(re, f));
  const reading = readingWithThd(levelDbc);
  reading.harmonics = [{ order: 3, frequencyHz: 42, levelDbc, phaseDeg: (Math.atan2(f, re) * 180) / Math.PI }];
  return reading;
}

async function sheetPdf(serial: string, positions: number[]): Promise<{ pages: string[]; verdict: string }> {
  const procedureId = bench.station.records.listProcedures()[0]!.id;
  const { run } = bench.station.records.openRun({ serial, procedureId, operator: 'A. Tester' });
  for (const position of positions) bench.station.records.recordTrimPoint({ runId: run.id, position, reading: trimReading(position), live: null, stimulus: { on: true, frequencyHz: 14, levelDbfs: -12 } });
  const page = await bench.openApp();
  await openUnitByKeyboard(page, serial); // reopens the run with its points
  await expect.poll(() => page.getByTestId('trim-points').locator('tbody tr').count(), POLL).toBe(positions.length);
  await page.getByTestId('finish-run').click();
  // These points never reach a recommendation (all far short of the null): the run cannot pass.
  await page.getByTestId('finish-as-fail').click();
  await expect.poll(() => page.getByTestId('sheet-pdf-path').textContent(), { timeout: 20_000 }).toMatch(/^Saved as /);
  const pdfPath = (await page.getByTestId('sheet-pdf-path').textContent())!.replace(/^Saved as /, '');
  copyFileSync(pdfPath, `/tmp/trimbench-sheet-${positions.length}-points.pdf`); // for a look by eye
  const pageCount = Number(/Pages:\s+(\d+)/.exec(execFileSync('pdfinfo', [pdfPath], { encoding: 'utf8' }))![1]);
  const pages = Array.from({ length: pageCount }, (_, i) =>
    execFileSync('pdftotext', ['-layout', '-f', String(i + 1), '-l', String(i + 1), pdfPath, '-'], { encoding: 'utf8' }),
  );
  return { pages, verdict: (await page.getByTestId('sheet-verdict').textContent())! };
}

describe('the unit sheet’s pages', () => {
  it('prints a ten-point run on one A4 page with the serial and the verdict', { timeout: 60_000 }, async () => {
    const serial = 'MG20-2611-0110';
    const { pages, verdict } = await sheetPdf(serial, [0, 0.5, 1, 1.5, 2, 2.5, 3, 3.5, 4, 4.5]);
    expect(pages).toHaveLength(1);
    expect(pages[0]).toContain(serial);
    expect(pages[0]).toMatch(new RegExp(`\\b${verdict}\\b`));
    expect(pages[0]).toContain('page 1 of 1');
    // Labels that cannot be confused, and times that say their zone.
    expect(pages[0]).toMatch(/Product/);
    expect(pages[0]).toMatch(/Curve fit/);
    expect(pages[0]).not.toMatch(/\bModel\b/);
    expect(pages[0]).toMatch(/Recorded \(UTC[+−]\d\d:\d\d\)/);
    expect(pages[0]).toMatch(/recorded point \(H3\)/);
  });

  it('carries the serial and “page x of y” on every page of a longer run', { timeout: 60_000 }, async () => {
    const serial = 'MG20-2611-0111';
    const positions = Array.from({ length: 40 }, (_, i) => Math.round(i * 0.12 * 100) / 100);
    const { pages } = await sheetPdf(serial, positions);
    expect(pages.length).toBeGreaterThan(1);
    pages.forEach((text, i) => {
      expect(text).toContain(serial);
      expect(text).toContain(`page ${i + 1} of ${pages.length}`);
    });
  });
});
