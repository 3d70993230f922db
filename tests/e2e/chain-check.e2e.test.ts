// The chain check in the real renderer: the demo bench as a loopback (an invented chain whose
// figures follow from its construction), and WAV files standing for a loopback, each with values
// known from how it was made. Every expected figure is computed here from the construction and a
// textbook formula; none is read from the app first.

import { afterAll, afterEach, describe, expect, it } from 'vitest';
import { join } from 'node:path';
import type { Page } from 'playwright-core';
import { openBench, type Bench, POLL } from '../harness/bench-harness.ts';
import type { ChainCheckResult } from '../../shared/calibration/chain-check.ts';
import { DEMO_CHAIN_PARAMETERS } from '../../shared/sim/demo-chain.ts';
import { tempDir } from '../support/station.ts';
import { CHAIN_WAV_RATE_HZ, CLEAN_TONE, NOISE_ONLY, steppedSineDeviation, writeCleanToneWav, writeNoiseWav, writeSteppedSineWav } from '../support/chain-wavs.ts';

const benches: Bench[] = [];
// One bench at a time: an earlier one's real-time capture would slow the next test's readings.
afterEach(async () => {
  for (const bench of benches.splice(0)) await bench.close();
});
const files = tempDir();
afterAll(() => files.remove());

/** IEC 61672-1 A-weighting (its Annex E formula), written here from the standard, not from shared/dsp. */
function aWeighting(f: number): number {
  const f1 = 20.598997, f2 = 107.65265, f3 = 737.86223, f4 = 12194.217;
  const ra = (f4 ** 2 * f ** 4) / ((f ** 2 + f1 ** 2) * Math.sqrt((f ** 2 + f2 ** 2) * (f ** 2 + f3 ** 2)) * (f ** 2 + f4 ** 2));
  return ra * 10 ** (2.0 / 20); // A(1 kHz) = 0 dB
}

/** Mean of A² over lowHz..highHz times the band width: white noise of unit density weighted (midpoint rule, 1 Hz steps). */
function aWeightedBandwidth(lowHz: number, highHz: number): number {
  let sum = 0;
  for (let f = lowHz + 0.5; f < highHz; f += 1) sum += aWeighting(f) ** 2;
  return sum;
}

/** Noise of RMS σ (white up to Nyquist) read over a band, dBFS (AES17: a full-scale sine, mean square 1/2, is 0 dBFS). */
function whiteNoiseDbfs(sigma: number, rateHz: number, lowHz: number, highHz: number, aWeighted: boolean): number {
  const density = sigma ** 2 / (rateHz / 2); // mean square per Hz
  const power = density * (aWeighted ? aWeightedBandwidth(lowHz, highHz) : highHz - lowHz);
  return 10 * Math.log10(power / 0.5);
}

async function openWith(captureWav: string | null): Promise<Page> {
  const bench = await openBench({ captureWav });
  benches.push(bench);
  const page = await bench.openApp();
  // A calibration to hang the chain check on (a stated input: +18 dBu at 0 dBFS in).
  await page.evaluate(async (inputId) => {
    const bridge = (window as unknown as { trimbench: Record<string, (r: unknown) => Promise<{ ok: boolean; error?: { message: string } }>> }).trimbench;
    const answer = await bridge['recordCalibration']({
      operator: 'A. Tester',
      setup: { inputDeviceId: inputId, inputDeviceLabel: 'bench input', inputChannel: 0, outputDeviceId: '', outputDeviceLabel: 'default', sampleRateHz: 48000 },
      output: { referenceHz: 1000, referenceDbfs: -20, meterEntry: '0.775 V' },
      input: { method: 'stated', statedEntry: '+18 dBu' },
    });
    if (!answer.ok) throw new Error(answer.error?.message);
  }, captureWav ? 'default' : 'demo-bench');
  if (captureWav === null) await expect.poll(() => page.getByTestId('input-select').inputValue(), POLL).toBe('demo-bench');
  await page.getByRole('button', { name: 'Start capture' }).click();
  await expect.poll(() => page.getByTestId('capture-status').isVisible(), POLL).toBe(true);
  await page.evaluate(() => localStorage.setItem('trimbench.operator', 'A. Tester'));
  await page.getByTestId('open-station').click();
  await page.getByTestId('station-view').waitFor();
  return page;
}

/** The finished run's result; a run that stopped with a message fails the test with that message. */
async function finished(page: Page, timeoutMs: number): Promise<ChainCheckResult> {
  const result = page.getByTestId('chain-check-result');
  const problem = page.getByTestId('chain-check-problem');
  await result.or(problem).waitFor({ timeout: timeoutMs });
  if (await problem.isVisible()) throw new Error(`the chain check stopped: ${await problem.textContent()}`);
  return JSON.parse((await result.getAttribute('data-result'))!) as ChainCheckResult;
}

/** Sets which parts run: residual points by their label text, response spacing, noise, latency. */
async function choose(page: Page, plan: { residuals: RegExp | null; response: 'third-octave' | 'octave' | 'none'; noise: boolean; latency: boolean }) {
  const residualBoxes = page.locator('.chain-plan > div label');
  for (let i = 0; i < (await residualBoxes.count()); i++) {
    const box = residualBoxes.nth(i);
    const wanted = plan.residuals !== null && plan.residuals.test((await box.textContent()) ?? '');
    await box.locator('input').setChecked(wanted);
  }
  // Within the panel: the station's limits beside it name some of the same quantities.
  const panel = page.locator('section.chain-check');
  await panel.getByLabel('Response steps').selectOption(plan.response);
  await panel.getByLabel('Noise floor with the generator off').setChecked(plan.noise);
  await panel.getByLabel('Round-trip latency').setChecked(plan.latency);
}

const shots = process.env['TRIMBENCH_SHOTS'];

describe('chain check on the demo bench as a loopback (shared/sim/demo-chain.ts)', () => {
  it('finds the residual, noise floor, high-pass and latency the invented chain was built with', { timeout: 120_000 }, async () => {
    const page = await openWith(null);
    await expect.poll(() => page.getByTestId('chain-check-demo').isVisible(), POLL).toBe(true);
    await choose(page, { residuals: /./, response: 'octave', noise: true, latency: true });
    await page.getByRole('button', { name: 'Run chain check' }).click();
    await page.getByTestId('chain-check-progress').waitFor({ timeout: 5000 });
    if (shots) await page.screenshot({ path: join(shots, 'chain-check-running.png'), fullPage: true });
    const result = await finished(page, 100_000);
    if (shots) await page.screenshot({ path: join(shots, 'chain-check-finished.png'), fullPage: true });

    const p = DEMO_CHAIN_PARAMETERS;
    const rate = 48000;
    const highPass = (f: number) => f / Math.hypot(f, p.highPassHz); // first-order high-pass, |H|
    // y = x + a2·x² + a3·x³ of A·sin: H1 = A + 3·a3·A³/4, H2 = a2·A²/2, H3 = a3·A³/4 (power reduction).
    const harmonics = (levelDbfs: number, f: number) => {
      const a = 10 ** (levelDbfs / 20) * highPass(f);
      return { h1: a + (3 * p.thirdOrder * a ** 3) / 4, h2: (p.secondOrder * a ** 2) / 2, h3: (p.thirdOrder * a ** 3) / 4 };
    };
    expect(result.residuals.length).toBeGreaterThanOrEqual(2); // the demo procedure's 14 Hz and 1 kHz
    for (const r of result.residuals) {
      const { h1, h2, h3 } = harmonics(r.generatorDbfs, r.frequencyHz);
      // Within 1 dB: the chain's noise in a harmonic's fitted bins (about 20 dB under H2 in the 8192-sample
      // frame of a 1 kHz tone: σ²·ENBW/(fs/2) against a2·A²/2) moves one reading's THD by up to about 0.7 dB.
      const expectedThd = 20 * Math.log10(Math.hypot(h2, h3) / h1);
      expect(Math.abs(r.thdDb - expectedThd), `THD at ${r.frequencyHz} Hz: ${r.thdDb} dB, expected ${expectedThd} dB`).toBeLessThan(1);
      if (r.frequencyHz === 1000) {
        // THD+N adds the noise in the 20 Hz–20 kHz band (white, σ², its share of 0..24 kHz).
        const noiseMs = (p.noiseRms ** 2 * (20000 - 20)) / (rate / 2);
        const expected = 10 * Math.log10((h2 ** 2 / 2 + h3 ** 2 / 2 + noiseMs) / (h1 ** 2 / 2));
        expect(r.thdnDb).toBeGreaterThan(expected - 0.5);
        expect(r.thdnDb).toBeLessThan(expected + 0.5);
      }
    }
    const noise = result.noiseFloor!;
    expect(noise.unweightedDbfs).toBeGreaterThan(whiteNoiseDbfs(p.noiseRms, rate, 20, 20000, false) - 0.5);
    expect(noise.unweightedDbfs).toBeLessThan(whiteNoiseDbfs(p.noiseRms, rate, 20, 20000, false) + 0.5);
    expect(noise.aWeightedDbfs).toBeGreaterThan(whiteNoiseDbfs(p.noiseRms, rate, 20, 20000, true) - 0.5);
    expect(noise.aWeightedDbfs).toBeLessThan(whiteNoiseDbfs(p.noiseRms, rate, 20, 20000, true) + 0.5);
    // dBu = dBFS + the stated +18 dBu at 0 dBFS.
    expect(noise.aWeightedDbu!).toBeCloseTo(noise.aWeightedDbfs + 18, 6);

    const response = result.response!;
    for (const f of [10, 20]) {
      const point = response.points.find((q) => q.frequencyHz === f)!;
      const expectedDb = 20 * Math.log10(highPass(f) / highPass(1000));
      expect(Math.abs(point.relativeDb - expectedDb), `response at ${f} Hz: ${point.relativeDb} dB, expected ${expectedDb} dB`).toBeLessThan(0.02);
    }
    expect(result.latency?.latencySamples).toBe(p.latencySamples);
    expect(result.latency?.latencyMs).toBeCloseTo((1000 * p.latencySamples) / rate, 6);

    // Invented limits' defaults: this chain is built to pass them all.
    expect(await page.getByTestId('chain-check-verdict').first().textContent()).toBe('PASS');
    await page.getByRole('button', { name: 'Record chain check' }).click();
    await page.getByTestId('chain-check-recorded').waitFor({ timeout: 10_000 });
    if (shots) await page.screenshot({ path: join(shots, 'chain-check-recorded.png'), fullPage: true });
  });

  it('stops at Esc: generator muted, nothing stored', { timeout: 60_000 }, async () => {
    const page = await openWith(null);
    await choose(page, { residuals: /./, response: 'octave', noise: true, latency: true });
    await page.getByRole('button', { name: 'Run chain check' }).click();
    await page.getByTestId('chain-check-progress').waitFor({ timeout: 5000 });
    await expect.poll(() => page.getByTestId('mute').textContent(), POLL).toBe('Mute generator (Esc)');
    await page.keyboard.press('Escape');
    await expect.poll(() => page.getByTestId('chain-check-problem').textContent(), POLL).toMatch(/stopped.*nothing was stored/i);
    await expect.poll(() => page.getByTestId('mute').textContent(), POLL).toBe('Generator muted');
    const stored = await page.evaluate(async () => {
      const bridge = (window as unknown as { trimbench: Record<string, (r: unknown) => Promise<{ ok: boolean; value: { chainChecks: unknown[] }[] }>> }).trimbench;
      return (await bridge['listCalibrations']({})).value.flatMap((c) => c.chainChecks).length;
    });
    expect(stored).toBe(0);
  });
});

describe('chain check on WAV files standing for a loopback (tests/support/chain-wavs.ts)', () => {
  it('reads the residual THD of a clean tone with H3 at −100 dBc', { timeout: 90_000 }, async () => {
    const page = await openWith(writeCleanToneWav(join(files.path, 'clean-tone.wav')));
    await choose(page, { residuals: /^1 kHz/, response: 'none', noise: false, latency: false });
    await page.getByRole('button', { name: 'Run chain check' }).click();
    const result = await finished(page, 60_000);
    expect(result.residuals).toHaveLength(1);
    const r = result.residuals[0];
    expect(r.frequencyHz).toBe(CLEAN_TONE.frequencyHz);
    // Construction: one harmonic, H3, at −100 dBc, so THD = −100 dB; float32 rounding (≈ −150 dBFS) adds nothing visible.
    expect(r.thdDb).toBeGreaterThan(CLEAN_TONE.h3Dbc - 0.3);
    expect(r.thdDb).toBeLessThan(CLEAN_TONE.h3Dbc + 0.3);
    expect(r.thdnDb).toBeGreaterThan(CLEAN_TONE.h3Dbc - 0.3);
    expect(r.thdnDb).toBeLessThan(CLEAN_TONE.h3Dbc + 1);
  });

  it('reads the noise floor of white noise of known σ, and refuses a latency with no stimulus in the capture', { timeout: 90_000 }, async () => {
    const page = await openWith(writeNoiseWav(join(files.path, 'noise.wav')));
    await choose(page, { residuals: null, response: 'none', noise: true, latency: true });
    await page.getByRole('button', { name: 'Run chain check' }).click();
    const result = await finished(page, 60_000);
    const rate = CHAIN_WAV_RATE_HZ;
    const noise = result.noiseFloor!;
    for (const [measured, weighted] of [[noise.unweightedDbfs, false], [noise.aWeightedDbfs, true]] as const) {
      const expected = whiteNoiseDbfs(NOISE_ONLY.sigma, rate, 20, 20000, weighted);
      expect(measured, weighted ? 'A-weighted' : 'unweighted').toBeGreaterThan(expected - 0.5);
      expect(measured, weighted ? 'A-weighted' : 'unweighted').toBeLessThan(expected + 0.5);
    }
    // The capture holds only the file's noise, never the played burst: the latency is refused, with why.
    expect(result.latency).toBeNull();
    expect(result.latencyRefusal).toMatch(/^Latency: /);
    const latencyRow = page.getByTestId('chain-check-item').filter({ hasText: 'Round-trip latency' });
    expect(await latencyRow.textContent()).toContain('FAIL');
  });

  it('reads the response of a stepped-sine file in octave steps', { timeout: 120_000 }, async () => {
    // The panel's octave steps at 44.1 kHz: ISO 266 octaves of 1 kHz, plus 10 Hz, 20 Hz and the top step (0.45 × 44.1 kHz caps it at 16 kHz).
    const steps = [10, 16, 20, 31.5, 63, 125, 250, 500, 1000, 2000, 4000, 8000, 16000];
    const page = await openWith(writeSteppedSineWav(join(files.path, 'stepped.wav'), steps));
    await choose(page, { residuals: null, response: 'octave', noise: false, latency: false });
    await page.getByRole('button', { name: 'Run chain check' }).click();
    const result = await finished(page, 100_000);
    const response = result.response!;
    expect(response.points.map((p) => p.frequencyHz)).toEqual(steps);
    for (const point of response.points) {
      // Construction: each step at −12 dBFS plus its deviation; the 1 kHz step has none, so relative = deviation.
      expect(Math.abs(point.relativeDb - steppedSineDeviation(point.frequencyHz)), `${point.frequencyHz} Hz: ${point.relativeDb} dB`).toBeLessThan(0.05);
    }
  });
});
