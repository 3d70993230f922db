// Issue 11, `max-level` on the demo bench in the real renderer: the generator rises from the start
// level until the simulated stage's THD+N crosses the threshold, and the level found lies where the
// stage's own transfer puts the crossing; Esc stops it and records nothing; a unit whose output
// drives the station's input into clipping stops the run there, recorded as a FAIL with its reason.
//
// Expected values come from outside the step's code:
// - the crossing from the simulated stage's transfer (shared/sim/demo-unit.ts): at 1 kHz with the
//   trimmer at 0 the driver feeds no current back, so the output is the driver's memoryless curve
//   (its polynomial, then its swing into the supply) through the linear loop of source and winding
//   resistance, coupling capacitor and primary (magnetising inductance ∥ reflected load), whose
//   flux at 1 kHz is far below saturation. THD+N is found from that curve by its Fourier series,
//   each harmonic through the loop's gain at its own frequency (textbook phasor analysis), noise
//   (about −100 dB here) left out;
// - levels by the dBu definition (0 dBu = √0.6 V = 0.7746 V RMS) and AES17's full-scale sine: the
//   station is calibrated with 0.7746 V read at −20 dBFS, so 0 dBFS is +20 dBu at both ends.

import { join } from 'node:path';
import { mkdirSync, writeFileSync } from 'node:fs';
import { tmpdir } from 'node:os';
import type { Page } from 'playwright-core';
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { dispatch, type CallerContext } from '../../electron/services/handlers.ts';
import { DEMO_UNIT_PARAMETERS, driverSwing } from '../../shared/sim/demo-unit.ts';
import { calibrateDemoBench, openBench, POLL, type Bench } from '../harness/bench-harness.ts';
import { MAX_LEVEL_STEP, maxLevelProcedureText } from '../support/max-level.ts';

const SHOTS = '/tmp/shots-e';
const FS_DBU = 20 * Math.log10(0.7746 / Math.sqrt(0.6)) + 20;
const caller = (path: string | null): CallerContext => ({ printToPdf: async () => new Uint8Array(), print: async () => false, chooseProcedureFile: async () => path });

/** +10 to +20 dBu (−10 to 0 dBFS) in 1 dB steps until THD+N reaches 1 %; the unit must reach +12 dBu. */
const STEP = { ...MAX_LEVEL_STEP, startLevel: { value: 10, unit: 'dBu' }, ceiling: { value: 20, unit: 'dBu' } };
/** For the clipping run: a threshold no reading reaches before the input clips. */
const CLIP_STEP = { ...STEP, thdnThresholdPercent: 10, instructions: ['The level rises in 1 dB steps until THD+N reaches 10 %.'] };

// ---- the simulated stage at 1 kHz, from its parameters -------------------------------------------
const p = DEMO_UNIT_PARAMETERS;
/** The loop's gain from driver to primary at f: Zp/(R0 + Zc + Zp), Zp = jωL ∥ R_L, Zc = R_d ∥ 1/(jωC). */
function loopGain(frequencyHz: number): number {
  const w = 2 * Math.PI * frequencyHz;
  const div = (a: [number, number], b: [number, number]): [number, number] => {
    const d = b[0] ** 2 + b[1] ** 2;
    return [(a[0] * b[0] + a[1] * b[1]) / d, (a[1] * b[0] - a[0] * b[1]) / d];
  };
  const mul = (a: [number, number], b: [number, number]): [number, number] => [a[0] * b[0] - a[1] * b[1], a[0] * b[1] + a[1] * b[0]];
  const add = (a: [number, number], b: [number, number]): [number, number] => [a[0] + b[0], a[1] + b[1]];
  const parallel = (a: [number, number], b: [number, number]) => div(mul(a, b), add(a, b));
  const zp = parallel([0, w * p.magnetizingHenries], [p.reflectedLoadOhms, 0]);
  const zc = parallel([p.couplingDampingOhms, 0], [0, -1 / (w * p.couplingFarads)]);
  const total = add(add([p.windingOhms + p.sourceOhms, 0], zc), zp);
  const h = div(zp, total);
  return Math.hypot(h[0], h[1]);
}
/** Fourier amplitudes of the driver's output for an input sine of peak x (full scale 1), harmonics 1–19 (the meter's band to 20 kHz). */
function driverHarmonics(x: number): number[] {
  const n = 4096;
  const re = new Array<number>(20).fill(0);
  const im = new Array<number>(20).fill(0);
  for (let i = 0; i < n; i++) {
    const t = (2 * Math.PI * i) / n;
    const u = x * Math.sin(t);
    const v = driverSwing(p.driverGain * p.driveVoltsPerFullScale * (u + p.driverSquare * u * u - p.driverCubic * u * u * u), p);
    for (let k = 1; k < 20; k++) {
      re[k] += v * Math.cos(k * t);
      im[k] += v * Math.sin(k * t);
    }
  }
  return re.map((r, k) => (2 / n) * Math.hypot(r, im[k]));
}
/** THD (%) at the unit's output and its output level (dBu at the calibrated input) for input peak x. */
function stageAt(x: number): { thdPercent: number; outputDbu: number } {
  const h = driverHarmonics(x);
  const out = h.map((a, k) => (k === 0 ? 0 : a * loopGain(1000 * k)));
  const harmonics = Math.sqrt(out.slice(2).reduce((s, a) => s + a * a, 0));
  return { thdPercent: (100 * harmonics) / out[1], outputDbu: 20 * Math.log10(out[1] / p.driveVoltsPerFullScale) + FS_DBU };
}
/** Where THD reaches `percent`, by bisection on the input's peak (THD rises with drive past the knee). */
function crossingDbu(percent: number): number {
  let low = 0.3;
  let high = 1;
  for (let i = 0; i < 60; i++) {
    const mid = (low + high) / 2;
    if (stageAt(mid).thdPercent < percent) low = mid;
    else high = mid;
  }
  return stageAt(low).outputDbu;
}

// ---- the page -------------------------------------------------------------------------------------
let bench: Bench;
beforeAll(async () => {
  mkdirSync(SHOTS, { recursive: true });
  bench = await openBench({ captureWav: null });
  await calibrateDemoBench(bench, -20);
  await importProcedure(STEP, 'A');
});
afterAll(() => bench?.close());

async function importProcedure(step: object, revision: string) {
  const path = join(tmpdir(), `trimbench-max-level-${revision}.json`);
  writeFileSync(path, maxLevelProcedureText(step, revision));
  const imported = await dispatch(bench.station.handlers, 'importProcedure', {}, caller(path));
  if (!imported.ok) throw new Error(imported.error.message);
}

const phase = (page: Page) => page.getByTestId('max-level').getAttribute('data-phase');
const runOf = (serial: string) => bench.station.db.prepare('SELECT runs.id AS id FROM runs JOIN units ON units.id = runs.unit_id WHERE units.serial = ? ORDER BY runs.id DESC').get(serial) as { id: number };

/** Opens a unit on the demo bench and acknowledges its safety notice: the max-level step comes up. */
async function openUnit(page: Page, serial: string, revision: string) {
  await expect.poll(() => page.getByTestId('input-select').inputValue(), POLL).toBe('demo-bench');
  await page.getByRole('button', { name: 'Start capture' }).click();
  await page.getByLabel('Operator').fill('A. Tester');
  await page.getByLabel('Procedure').selectOption({ label: `ML-TEST rev ${revision}` });
  await page.getByTestId('serial-input').fill(serial);
  await page.getByTestId('serial-input').press('Enter');
  await expect.poll(() => page.getByTestId('current-step').getAttribute('data-step'), POLL).toBe('safety');
  await page.keyboard.press('Enter');
  await expect.poll(() => page.getByTestId('current-step').getAttribute('data-step'), POLL).toBe(STEP.id);
  // An impatient second Enter that lands on the step as it appears starts nothing loud.
  await page.keyboard.press('Enter');
  await page.waitForTimeout(600); // the next press is a deliberate one
  expect(await phase(page)).toBe('ready');
  expect(await page.getByTestId('mute').isDisabled()).toBe(true);
}

describe('max-level on the demo bench', () => {
  it('finds the level where the simulated stage crosses 1 % THD+N, records it, and Esc stops a repeat with nothing recorded', { timeout: 240_000 }, async () => {
    const expected = crossingDbu(STEP.thdnThresholdPercent);
    // The stage crosses inside the step's range, well above the +12 dBu limit.
    expect(expected).toBeGreaterThan(14);
    expect(expected).toBeLessThan(19.5);

    const page = await bench.openApp();
    await openUnit(page, 'ML-0001', 'A');
    expect(await page.getByTestId('max-level-caution').textContent()).toMatch(/hearing protection.*Esc/s);
    await page.screenshot({ path: `${SHOTS}/max-level-before.png`, fullPage: true });

    await page.keyboard.press('Enter');
    await expect.poll(() => phase(page), POLL).toBe('running');
    await expect.poll(() => page.getByTestId('max-level-levels').locator('tbody tr[data-thdn]').count(), { timeout: 60_000 }).toBeGreaterThanOrEqual(4);
    await page.screenshot({ path: `${SHOTS}/max-level-during.png`, fullPage: true });
    await expect.poll(() => phase(page), { timeout: 120_000 }).toBe('ended');
    // The generator is muted at the end, before anything is recorded.
    await expect.poll(() => page.getByTestId('mute').textContent(), POLL).toBe('Generator muted');
    await page.getByTestId('max-level').scrollIntoViewIfNeeded();
    await page.screenshot({ path: `${SHOTS}/max-level-after.png`, fullPage: true });
    expect(await page.getByTestId('max-level-outcome').getAttribute('data-verdict')).toBe('pass');
    await page.getByTestId('check-primary').press('Enter');
    await expect.poll(() => page.getByTestId('current-step').getAttribute('data-step'), POLL).toBe('trim');

    const detail = bench.station.records.getRun(runOf('ML-0001').id);
    const result = detail.stepResults.find((r) => r.stepId === STEP.id)!;
    expect(result.verdict).toBe('pass');
    const found = result.measurements[0].value!;
    // Within 0.15 dB of the stage's own crossing: the meter's THD+N holds noise and the readings are
    // 1 dB apart, interpolated in dB of THD+N.
    expect(Math.abs(found - expected)).toBeLessThan(0.15);

    // A repeat stopped by Esc after its first level: muted at once, nothing recorded.
    await page.locator(`[data-testid=step-list] li[data-step="${STEP.id}"] button`).click();
    await page.getByTestId('repeat-step').click();
    await page.waitForTimeout(600);
    await page.getByTestId('check-primary').press('Enter');
    await expect.poll(() => page.getByTestId('max-level-levels').locator('tbody tr[data-thdn]').count(), { timeout: 30_000 }).toBeGreaterThanOrEqual(1);
    await page.keyboard.press('Escape');
    await expect.poll(() => phase(page), POLL).toBe('stopped');
    expect(await page.getByTestId('mute').textContent()).toBe('Generator muted');
    expect(await page.getByTestId('max-level-stopped').textContent()).toMatch(/Esc.*nothing was recorded/);
    await page.screenshot({ path: `${SHOTS}/max-level-esc.png`, fullPage: true });
    expect(bench.station.records.getRun(runOf('ML-0001').id).stepResults.filter((r) => r.stepId === STEP.id)).toHaveLength(1);

    // Onto the sheet through its generic step rows (the run finished as FAIL: its trim was not done).
    await page.getByTestId('finish-run').click();
    await page.getByTestId('finish-as-fail').click();
    await expect.poll(() => page.getByTestId('sheet-verdict').isVisible(), POLL).toBe(true);
    const rows = page.getByTestId('sheet-steps').locator(`tr[data-step="${STEP.id}"]`);
    const text = (await rows.allTextContents()).join(' ');
    expect(text).toMatch(/Max level/);
    expect(text).toContain(`${found >= 0 ? '+' : '−'}${Math.abs(found).toFixed(1)} dBu`);
    expect(text).toMatch(/≥ \+12\.0 dBu/);
    await page.getByTestId('sheet-steps').scrollIntoViewIfNeeded();
    await page.screenshot({ path: `${SHOTS}/max-level-sheet.png`, fullPage: true });
  });

  it('stops when a unit with more gain drives the station input into clipping: a FAIL with the reason, never a PASS', { timeout: 240_000 }, async () => {
    await importProcedure(CLIP_STEP, 'B');
    // A unit whose driver has twice the demo unit's gain (+6 dB), so its output can reach past the
    // station input's full scale: the simulated unit as the page's worker loads it, with that one
    // parameter changed on its way from the server (the page and main are the app's own).
    let patched = false;
    await bench.context.route('**/assets/analysis.worker-*.js', async (route) => {
      const response = await route.fetch();
      const original = await response.text();
      const body = original.replace(/(const DEMO_UNIT_PARAMETERS = \{[^}]*?driverGain: )1,/, '$12,');
      patched = body !== original;
      await route.fulfill({ response, body });
    });
    const page = await bench.openApp();
    await openUnit(page, 'ML-0002', 'B');
    expect(patched).toBe(true);
    await page.keyboard.press('Enter');
    await expect.poll(() => phase(page), POLL).toBe('running');
    await expect.poll(() => phase(page), { timeout: 120_000 }).toBe('ended');
    expect(await page.getByTestId('max-level-outcome').getAttribute('data-end')).toBe('clipped');
    expect(await page.getByTestId('mute').textContent()).toBe('Generator muted');
    await page.getByTestId('max-level').scrollIntoViewIfNeeded();
    await page.screenshot({ path: `${SHOTS}/max-level-clipped.png`, fullPage: true });
    expect(await page.getByTestId('max-level-outcome').getAttribute('data-verdict')).toBe('fail');
    await page.getByTestId('check-primary').press('Enter');
    await expect.poll(() => page.getByTestId('current-step').getAttribute('data-step'), POLL).toBe('trim');
    const result = bench.station.records.getRun(runOf('ML-0002').id).stepResults.find((r) => r.stepId === STEP.id)!;
    expect(result.verdict).toBe('fail');
    expect(result.measurements[0].value).toBeNull();
    expect(result.reasons[0]).toMatch(/input clipped/);
  });
});
