// The ringing step in the real renderer on the demo bench: a test procedure (invented) with the step
// after its safety notice; the step sets the generator to its square wave, the technician plays it
// and attaches a scope capture, main's file dialog stood in for by the harness (as for procedure
// import). The record is the square-wave response of a textbook second-order system (Ogata: ringing
// at fn·√(1−ζ²), overshoot exp(−ζπ/√(1−ζ²))), so the figures shown are checked against the textbook.

import { mkdtempSync, rmSync, writeFileSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import type { Page } from 'playwright-core';
import { dispatch } from '../../electron/services/handlers.ts';
import { openBench, POLL, type Bench } from '../harness/bench-harness.ts';
import { noCaller } from '../support/station.ts';
import { ringingProcedureFile, scopeRecordText } from '../support/ringing-procedure.ts';
import { textbookOvershoot, textbookRingHz } from '../support/step-response.ts';

const SHOTS = '/tmp/shots-g';
const folder = mkdtempSync(join(tmpdir(), 'trimbench-ringing-e2e-'));
const SYSTEM = { zeta: 0.45, naturalHz: 300e3 };
let bench: Bench;

beforeAll(async () => {
  bench = await openBench({ captureWav: null });
  const path = ringingProcedureFile(folder);
  const imported = await dispatch(bench.station.handlers, 'importProcedure', {}, { ...noCaller, chooseProcedureFile: async () => path });
  if (!imported.ok) throw new Error(imported.error.message);
});
afterAll(async () => {
  await bench?.close();
  rmSync(folder, { recursive: true, force: true });
});

const currentStep = (page: Page) => page.getByTestId('current-step').getAttribute('data-step');
const stepStatus = (page: Page, stepId: string) => page.locator(`[data-testid=step-list] li[data-step="${stepId}"]`).getAttribute('data-status');

describe('the ringing step', () => {
  it('plays the square wave, takes the scope capture main reads, shows the figures and the edge, and puts them on the sheet', { timeout: 150_000 }, async () => {
    const page = await bench.openApp();
    await expect.poll(() => page.getByTestId('input-select').inputValue(), POLL).toBe('demo-bench');
    await page.getByRole('button', { name: 'Start capture' }).click();
    await page.getByLabel('Operator').fill('A. Tester');
    await page.getByLabel('Procedure').selectOption({ label: 'RING-TEST rev A' });
    await page.getByTestId('serial-input').fill('MG20-2611-0077');
    await page.getByTestId('serial-input').press('Enter');
    await expect.poll(() => currentStep(page), POLL).toBe('safety');
    await page.keyboard.press('Enter');

    // The step sets the generator to its square wave, off until the technician plays it.
    await expect.poll(() => currentStep(page), POLL).toBe('ringing-20k');
    const panel = page.getByTestId('ringing-panel');
    await expect.poll(() => panel.getByTestId('ringing-caution').textContent(), POLL).toMatch(/dummy load.*cannot see ringing at 100 kHz and above/s);
    // The station's square is a quick look only; the measurement asks for a fast generator: twice the
    // step's 100 kHz ring-frequency limit, 0.35/200 kHz = 1.75 µs (rise time and bandwidth, common practice).
    expect(await page.getByTestId('ringing-square').textContent()).toMatch(/quick look and a setup aid only.*too slow to excite the ringing/);
    expect(await page.getByTestId('ringing-generator-needed').textContent()).toMatch(/function generator with a fast edge \(rise time under 1\.75 µs\)/);
    await expect.poll(() => page.getByTestId('generator-waveform').inputValue(), POLL).toBe('square');
    expect(await page.getByTestId('ringing-generator-state').textContent()).toBe('not playing');
    await page.getByTestId('ringing-play').click();
    await expect.poll(() => page.getByTestId('ringing-generator-state').textContent(), POLL).toBe('playing');
    await expect.poll(() => page.getByTestId('mute').isEnabled(), POLL).toBe(true);
    await page.screenshot({ path: join(SHOTS, 'ringing-before.png'), fullPage: true });

    // A file that is no scope record: refused in one message naming it, nothing recorded.
    const junk = join(folder, 'notes.csv');
    writeFileSync(junk, 'shopping,list\nmilk,eggs\n');
    bench.scopeFileChoice.path = junk;
    // Keyboard reachable: the button takes the focus and Enter presses it.
    await page.getByTestId('attach-scope-capture').focus();
    await page.keyboard.press('Enter');
    await expect.poll(() => page.getByTestId('ringing-message').textContent(), POLL).toMatch(/notes\.csv cannot be read/);
    expect(await stepStatus(page, 'ringing-20k')).toBe('not-run');

    // The unit's record: judged by main, the walk moves on; the step's result shows the figures and the edge.
    const good = join(folder, 'MG20-2611-0077 20k.csv');
    writeFileSync(good, scopeRecordText(SYSTEM, 20e3));
    bench.scopeFileChoice.path = good;
    await page.getByTestId('attach-scope-capture').click();
    await expect.poll(() => stepStatus(page, 'ringing-20k'), POLL).toBe('pass');
    await page.locator('[data-testid=step-list] li[data-step="ringing-20k"] button').click();
    const result = page.getByTestId('step-result');
    await expect.poll(() => result.getAttribute('data-verdict'), POLL).toBe('pass');
    const shown = async (quantity: string) => Number(await result.locator(`tr[data-quantity="${quantity}"]`).getAttribute('data-value'));
    expect(Math.abs((await shown('ringFrequencyHz')) / textbookRingHz(SYSTEM) - 1)).toBeLessThan(0.01);
    expect(Math.abs((await shown('overshootPercent')) - 100 * textbookOvershoot(SYSTEM.zeta))).toBeLessThan(1);
    await expect.poll(() => page.getByTestId('ringing-plot').locator('canvas').count(), POLL).toBeGreaterThan(0);
    expect(await page.getByTestId('ringing-plot').textContent()).toContain('MG20-2611-0077 20k.csv');
    await page.screenshot({ path: join(SHOTS, 'ringing-after.png'), fullPage: true });
    await page.getByTestId('back-to-current').click();

    // Esc mutes the square like any stimulus.
    await page.keyboard.press('Escape');
    await expect.poll(() => page.getByTestId('mute').isEnabled(), POLL).toBe(false);

    // The stepped sine: each frequency held for the dwell, its progress shown; Esc stops it and mutes.
    const stepped = page.getByTestId('stepped-sine');
    await stepped.getByLabel('Frequencies, Hz').fill('100, 200, 300');
    await stepped.getByLabel('Dwell, s').fill('0.5');
    await page.getByTestId('stepped-start').click();
    await expect.poll(() => page.getByTestId('stepped-progress').textContent(), POLL).toMatch(/^Step 1 of 3: 100 Hz/);
    expect(await page.getByLabel('Frequency, Hz (Enter applies)').inputValue()).toBe('100');
    expect(await page.getByTestId('generator-waveform').inputValue()).toBe('sine');
    await expect.poll(() => page.getByTestId('stepped-progress').textContent(), POLL).toMatch(/^Step 2 of 3: 200 Hz/);
    await page.keyboard.press('Escape');
    await expect.poll(() => page.getByTestId('mute').isEnabled(), POLL).toBe(false);
    await expect.poll(() => page.getByTestId('stepped-progress').count(), POLL).toBe(0);
    await page.waitForTimeout(700);
    expect(await page.getByTestId('mute').isEnabled()).toBe(false);

    // Finished as FAIL (the trim was not run): the sheet carries the ringing step's figures and the file.
    await page.getByTestId('finish-run').click();
    await page.getByTestId('finish-as-fail').click();
    await expect.poll(() => page.getByTestId('sheet-verdict').isVisible(), POLL).toBe(true);
    const rows = page.locator('[data-testid=sheet-steps] tr[data-step="ringing-20k"]');
    await expect.poll(() => rows.count(), POLL).toBe(4);
    const text = (await rows.allTextContents()).join(' ');
    expect(text).toMatch(/Ringing frequency.*Damping ratio.*Overshoot.*Settling time/s);
    expect(text).toContain('MG20-2611-0077 20k.csv');
    await page.screenshot({ path: join(SHOTS, 'ringing-sheet.png'), fullPage: true });
  });
});
