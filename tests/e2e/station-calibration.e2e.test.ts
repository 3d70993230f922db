// The Station view in the real renderer, with the main-process handlers behind it: a level
// calibration made as a technician makes it (voltmeter reading typed, loopback captured), its
// refusals, the badge in the top bar, the settings file, and a double Enter on Record.
//
// The loopback is a WAV file as the microphone: a 1 kHz cosine of known peak amplitude, standing for
// the output looped back into the input. Its level is known from its construction, not from the app.

import { afterAll, describe, expect, it } from 'vitest';
import { mkdirSync, mkdtempSync, readFileSync, rmSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import { fileURLToPath } from 'node:url';
import type { Page } from 'playwright-core';
import { openBench, POLL, type Bench } from '../harness/bench-harness.ts';
import { writeToneWav } from '../support/wav-files.ts';
import { DEMO_PROCEDURE } from '../../shared/procedures/demo-procedure.ts';

const benches: Bench[] = [];
const folder = mkdtempSync(join(tmpdir(), 'trimbench-station-'));
/** Screenshots of the Station view, for a person to look at (not compared). */
const SHOTS = process.env['TRIMBENCH_SCREENSHOTS'] ?? fileURLToPath(new URL('../../out/screenshots/', import.meta.url));
mkdirSync(SHOTS, { recursive: true });
afterAll(async () => {
  for (const bench of benches) await bench.close();
  rmSync(folder, { recursive: true, force: true });
});

const REFERENCE_HZ = 1000;
/** The wizard's default reference level (the issue: 1 kHz at a stated dBFS). */
const GENERATOR_DBFS = -20;
/**
 * The loop brings the tone back 6 dB hotter than it was sent (as an input more sensitive than the
 * output is loud). The WAV holds a cosine of peak amplitude 10^(−14/20); AES17 defines 0 dBFS as
 * the RMS of a full-scale sine, so a sine of peak A reads 20·log10(A) dBFS: −14 dBFS.
 */
const CAPTURED_DBFS = -14;
/** The voltmeter reading typed for the output, in volts RMS. */
const METER_VRMS = 1.228;
/** 0 dBu = √0.6 V RMS (0.7746 V: 1 mW into 600 Ω; IEC 60268-3 / common practice). */
const dbuOf = (vRms: number) => 20 * Math.log10(vRms / Math.sqrt(0.6));
/** dBu at 0 dBFS out = the reading in dBu − the reference in dBFS (the meter reads the reference). */
const EXPECTED_OUTPUT_DBU = dbuOf(METER_VRMS) - GENERATOR_DBFS;
/** dBu at 0 dBFS in: the input sees generatorDbfs + outputDbu dBu and reads it as capturedDbfs. */
const EXPECTED_INPUT_DBU = GENERATOR_DBFS + EXPECTED_OUTPUT_DBU - CAPTURED_DBFS;

async function benchWith(captureWav: string | null): Promise<Bench> {
  const bench = await openBench({ captureWav });
  benches.push(bench);
  return bench;
}

async function shot(page: Page, name: string) {
  await page.screenshot({ path: join(SHOTS, `station-${name}.png`), fullPage: true });
}

/** Opens the Station view by keyboard alone: Tab to "Station…", Enter. */
async function openStationByKeyboard(page: Page) {
  await expect.poll(() => page.getByTestId('open-station').isVisible(), POLL).toBe(true);
  await page.locator('body').focus();
  for (let i = 0; i < 10; i++) {
    await page.keyboard.press('Tab');
    if ((await page.evaluate(() => document.activeElement?.getAttribute('data-testid'))) === 'open-station') break;
  }
  expect(await page.evaluate(() => document.activeElement?.getAttribute('data-testid'))).toBe('open-station');
  await page.keyboard.press('Enter');
  await expect.poll(() => page.getByTestId('station-view').isVisible(), POLL).toBe(true);
}

describe('level calibration in the Station view', () => {
  it('computes dBu at 0 dBFS out from the meter and in from the loopback, refuses implausible entries, and records once on a double Enter', { timeout: 180_000 }, async () => {
    const wav = writeToneWav(join(folder, 'loopback-1k.wav'), { frequencyHz: REFERENCE_HZ, levelDbfs: CAPTURED_DBFS, seconds: 1 });
    const bench = await benchWith(wav);
    const page = await bench.openApp();
    await openStationByKeyboard(page);
    await shot(page, 'view');

    // No capture yet: the wizard says to start it; no calibration: the badge says so.
    await expect.poll(() => page.getByTestId('calibration-badge').getAttribute('data-state'), POLL).toBe('none');
    expect(await page.getByTestId('wizard-begin').isDisabled()).toBe(true);
    await page.getByRole('button', { name: 'Start capture' }).click();
    await expect.poll(() => page.getByTestId('capture-status').isVisible(), POLL).toBe(true);
    await expect.poll(() => page.getByTestId('calibration-badge').getAttribute('data-state'), POLL).toBe('none');
    await page.getByTestId('wizard-begin').click();

    // Output: the reference plays at the stated level; Esc still mutes it from the meter field.
    await expect.poll(() => page.getByTestId('reference-dbfs').inputValue(), POLL).toBe(String(GENERATOR_DBFS));
    await page.getByTestId('wizard-tone').click();
    await expect.poll(() => page.getByTestId('mute').textContent(), POLL).toMatch(/Mute generator/);
    await page.getByTestId('meter-entry').focus();
    await page.keyboard.press('Escape');
    await expect.poll(() => page.getByTestId('mute').textContent(), POLL).toBe('Generator muted');
    await page.getByTestId('wizard-tone').click();

    // Implausible entries are refused with a message and the wizard does not go on.
    // 1.228 mV at −20 dBFS is −36 dBu at 0 dBFS: below any interface's full scale (about −20 to +30 dBu).
    await page.getByTestId('meter-entry').fill('1.228 mV');
    await expect.poll(() => page.getByTestId('output-result').getAttribute('data-ok'), POLL).toBe('false');
    expect(await page.getByTestId('output-result').textContent()).toMatch(/outside .* of audio interfaces.*too low/);
    expect(await page.getByTestId('wizard-next').isDisabled()).toBe(true);
    await shot(page, 'output-refused');
    // A comma is 1.228 V or 1228 V depending on the country: refused, asking for a point.
    await page.getByTestId('meter-entry').fill('1,228 V');
    await expect.poll(() => page.getByTestId('output-result').textContent(), POLL).toMatch(/decimal point/);
    expect(await page.getByTestId('wizard-next').isDisabled()).toBe(true);

    await page.getByTestId('meter-entry').fill(`${METER_VRMS} V`);
    await expect.poll(() => page.getByTestId('output-result').getAttribute('data-ok'), POLL).toBe('true');
    expect(Number(await page.getByTestId('output-result').getAttribute('data-dbu'))).toBeCloseTo(EXPECTED_OUTPUT_DBU, 6);
    await shot(page, 'output');
    await page.getByTestId('meter-entry').press('Enter'); // Enter goes on to the input step
    await expect.poll(() => page.getByTestId('calibration-wizard').getAttribute('data-step'), POLL).toBe('input');
    // Moving on muted the reference.
    await expect.poll(() => page.getByTestId('mute').textContent(), POLL).toBe('Generator muted');

    // Input by loopback: the wizard takes the first settled reading of 1 kHz after the tone starts.
    await page.getByTestId('wizard-tone').click();
    await expect.poll(() => page.getByTestId('captured').getAttribute('data-dbfs'), { timeout: 60_000 }).not.toBeNull();
    const capturedDbfs = Number(await page.getByTestId('captured').getAttribute('data-dbfs'));
    // The WAV's construction, through Chromium's capture and resampling: within 0.1 dB.
    expect(Math.abs(capturedDbfs - CAPTURED_DBFS)).toBeLessThan(0.1);
    expect(Math.abs(Number(await page.getByTestId('captured').getAttribute('data-hz')) / REFERENCE_HZ - 1)).toBeLessThanOrEqual(0.01);
    const inputDbu = Number(await page.getByTestId('input-result').getAttribute('data-dbu'));
    expect(Math.abs(inputDbu - EXPECTED_INPUT_DBU)).toBeLessThan(0.1);
    await expect.poll(() => page.getByTestId('mute').textContent(), POLL).toBe('Generator muted');
    await shot(page, 'input-loopback');

    // The fixed-input way shows its own figure (+18 dBu stated is +18 dBu at 0 dBFS, by definition).
    await page.getByTestId('method-stated').check();
    await page.getByTestId('stated-entry').fill('+18 dBu');
    await expect.poll(() => page.getByTestId('input-result').getAttribute('data-dbu'), POLL).toBe('18');
    await shot(page, 'input-stated');
    await page.getByTestId('method-loopback').check();
    await expect.poll(() => page.getByTestId('input-result').getAttribute('data-ok'), POLL).toBe('true');
    await page.getByTestId('wizard-next').click();

    // Record: an impatient double Enter in the operator field — two submissions in one task, as a
    // fast second press arrives before main has answered the first.
    await page.getByTestId('calibration-operator').fill('A. Tester');
    await shot(page, 'record');
    await page.getByTestId('calibration-operator').evaluate((input: HTMLInputElement) => {
      input.form!.requestSubmit();
      input.form!.requestSubmit();
    });
    await expect.poll(() => page.getByTestId('calibration-done').isVisible(), POLL).toBe(true);
    await page.getByTestId('calibration-operator').press('Enter').catch(() => undefined); // gone: nothing to press
    // Straight from main's handler (it needs no caller context to list).
    const stored = await bench.station.handlers.listCalibrations({}, {} as Parameters<typeof bench.station.handlers.listCalibrations>[1]);
    expect(stored).toHaveLength(1);
    // Main recomputed the figures from the raw observations: the same formula's result.
    expect(stored[0].calibration.output.dbuAtFullScale).toBeCloseTo(EXPECTED_OUTPUT_DBU, 6);
    expect(Math.abs(stored[0].calibration.input.dbuAtFullScale - EXPECTED_INPUT_DBU)).toBeLessThan(0.1);
    expect(stored[0].calibration.operator).toBe('A. Tester');

    // The badge now says valid, and the history lists one calibration.
    await expect.poll(() => page.getByTestId('calibration-badge').getAttribute('data-state'), POLL).toBe('valid');
    await expect.poll(() => page.getByTestId('calibration-history').locator('tbody tr').count(), POLL).toBe(1);
    await shot(page, 'done');

    // Leaving the view mutes and returns to the bench; the badge goes with it.
    await page.getByTestId('station-back').click();
    await expect.poll(() => page.getByTestId('serial-input').isVisible(), POLL).toBe(true);
    await shot(page, 'bench-badge');

    // Another input channel is another setup: the calibration no longer holds for it (the issue:
    // a change of device or sample rate invalidates a calibration; the channel is part of the setup).
    await page.getByRole('button', { name: 'Stop capture' }).click();
    await page.getByLabel('Input channel carrying the unit').selectOption('1');
    await page.getByRole('button', { name: 'Start capture' }).click();
    await expect.poll(() => page.getByTestId('calibration-badge').getAttribute('data-state'), POLL).toBe('setup-changed');
    await shot(page, 'bench-setup-changed');
  });
});

describe('a procedure that requires a calibration', () => {
  it('refuses to start a unit on an uncalibrated station in main’s words, and starts it once the setup in use is calibrated', { timeout: 150_000 }, async () => {
    const wav = writeToneWav(join(folder, 'tone-1k.wav'), { frequencyHz: REFERENCE_HZ, levelDbfs: CAPTURED_DBFS, seconds: 1 });
    const bench = await benchWith(wav);
    // The demo procedure again, as a revision that requires a valid calibration (invented, for this test).
    bench.station.records.ensureProcedure({ ...DEMO_PROCEDURE, revision: 'CAL', requiresCalibration: true });
    const page = await bench.openApp();
    await page.getByRole('button', { name: 'Start capture' }).click();
    await expect.poll(() => page.getByTestId('capture-status').isVisible(), POLL).toBe(true);
    await page.getByLabel('Operator').fill('A. Tester');
    await page.getByLabel('Procedure').selectOption({ label: `${DEMO_PROCEDURE.code} rev CAL` });
    await page.getByTestId('serial-input').fill('MG20-2611-0301');
    await page.getByTestId('serial-input').press('Enter');
    // Main's refusal, shown as it words it: which procedure, which unit, why and what to do.
    await expect.poll(() => page.getByTestId('serial-message').textContent(), POLL).toMatch(/requires a calibrated station.*not calibrated.*Calibrate/);
    await shot(page, 'run-refused');

    // Calibrate this very setup (fixed input, the quickest way), then the same unit starts.
    await page.getByTestId('calibration-badge').click();
    await page.getByTestId('wizard-begin').click();
    await page.getByTestId('meter-entry').fill('+4 dBu');
    await page.getByTestId('wizard-next').click();
    await page.getByTestId('method-stated').check();
    await page.getByTestId('stated-entry').fill('+18 dBu');
    await page.getByTestId('wizard-next').click();
    await page.getByTestId('record-calibration').click();
    await expect.poll(() => page.getByTestId('calibration-done').isVisible(), POLL).toBe(true);
    await page.getByTestId('station-back').click();
    await page.getByLabel('Procedure').selectOption({ label: `${DEMO_PROCEDURE.code} rev CAL` });
    await page.getByTestId('serial-input').fill('MG20-2611-0301');
    await page.getByTestId('serial-input').press('Enter');
    await expect.poll(() => page.getByTestId('run-serial').textContent(), POLL).toBe('MG20-2611-0301');
  });
});

describe('station settings', () => {
  it('are saved to the settings file, survive a reload, and main’s refusal is shown as it comes', { timeout: 120_000 }, async () => {
    const bench = await benchWith(null);
    let page = await bench.openApp();
    await openStationByKeyboard(page);
    await expect.poll(() => page.getByTestId('chain-limits-note').textContent(), POLL).toMatch(/invented/);

    // One day is the least a calibration may hold (the station settings schema): 0 is refused by main.
    await page.getByTestId('station-expiry').fill('0');
    await page.getByTestId('save-settings').click();
    await expect.poll(() => page.getByTestId('settings-message').textContent(), POLL).toMatch(/at least one day/);

    await page.getByTestId('station-name').fill('Line 2 bench A');
    await page.getByTestId('station-mains').selectOption('60');
    await page.getByTestId('station-expiry').fill('14');
    await page.getByTestId('limit-residualThdnAt1kHzMaxDb').fill('-85');
    await page.getByTestId('use-current-audio').check();
    await page.getByTestId('station-expiry').press('Enter'); // Enter in a field saves the form
    await expect.poll(() => page.getByTestId('settings-message').textContent(), POLL).toMatch(/saved/);
    await shot(page, 'settings-saved');

    // The file in the data folder holds what was typed (station-settings.json, written by main).
    const file = JSON.parse(readFileSync(join(bench.dataDir, 'station-settings.json'), 'utf8'));
    expect(file.settings.stationName).toBe('Line 2 bench A');
    expect(file.settings.mainsHz).toBe(60);
    expect(file.settings.calibrationExpiryDays).toBe(14);
    expect(file.settings.chainLimits.residualThdnAt1kHzMaxDb).toBe(-85);
    expect(file.settings.defaultAudio.inputDeviceId).toBe('demo-bench');

    page = await bench.openApp(); // reload
    await expect.poll(() => page.locator('.topbar').textContent(), POLL).toMatch(/Station Line 2 bench A/);
    // The saved mains is the audio choice at start.
    await expect.poll(() => page.getByLabel('Mains frequency (for hum)').inputValue(), POLL).toBe('60');
    await openStationByKeyboard(page);
    expect(await page.getByTestId('station-name').inputValue()).toBe('Line 2 bench A');
    expect(await page.getByTestId('station-expiry').inputValue()).toBe('14');
    expect(await page.getByTestId('limit-residualThdnAt1kHzMaxDb').inputValue()).toBe('-85');
    expect(await page.getByTestId('default-audio').textContent()).toMatch(/Demo bench/);
  });
});
