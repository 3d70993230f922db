// The check steps' decision logic against values that come from outside the code: Fourier series
// whose coefficients give THD (THD = √(Σ aₙ²)/a₁, the ratio of RMS values, IEEE 1241), the dBu
// definition (0 dBu = √0.6 V RMS, 1 mW in 600 Ω), the AES17 convention that noise is referred to a
// full-scale sine, the Nyquist limit (fs/2), and the limit and onFail rules as docs/procedures.md
// states them. Every expected number is derived here from the construction, never read back from
// the code.

import { readFileSync } from 'node:fs';
import { describe, expect, it } from 'vitest';
import { FrameAnalyzer } from '../../shared/measurement/frame-analyzer.ts';
import { createHarmonicAnalysis, FLOOR_DB, type HarmonicAnalysis, type Reading } from '../../shared/measurement/reading.ts';
import {
  generatorFor,
  harmonicLevel,
  judgeLimit,
  measureCheckStep,
  type CheckOutcome,
  type CheckResult,
  type StationLevels,
} from '../../shared/procedures/check-steps.ts';
import { checkProcedureFile, type CheckStep, type ProcedureFile } from '../../shared/procedures/procedure-file.ts';
import { generatorWanted, runPlan } from '../../shared/procedures/run-plan.ts';
import { BLACKMAN_HARRIS_7 } from '../../shared/dsp/windows.ts';
import { DEMO_UNIT_PARAMETERS } from '../../shared/sim/demo-unit.ts';
import { HeadlessBench } from '../../shared/sim/headless-bench.ts';
import { gaussian, seededRandom } from '../support/random.ts';
import { enbwBinsOfCosineSum, levelAboveWhiteNoiseDbfs } from '../support/signals.ts';
import { judgeUnit, type StepOutcome } from '../../shared/procedures/unit-verdict.ts';

// ---- construction helpers ---------------------------------------------------------------------

/** dBu of an RMS voltage, from the definition: 0 dBu = √0.6 V (1 mW into 600 Ω). */
const dbuOfVolts = (vRms: number) => 20 * Math.log10(vRms / Math.sqrt(0.6));

const RATE = 48000;
const FRAME = 16384;

/** Σ aₖ·sin(2π·k·f·n/fs): a Fourier series with amplitude aₖ at harmonic k (a₁ the fundamental). */
function fourierSeries(cycles: number, amplitudes: Record<number, number>): { samples: Float64Array; frequencyHz: number } {
  const samples = new Float64Array(FRAME);
  for (let n = 0; n < FRAME; n++) {
    let x = 0;
    for (const [k, a] of Object.entries(amplitudes)) x += a * Math.sin((2 * Math.PI * Number(k) * cycles * n) / FRAME);
    samples[n] = x;
  }
  return { samples, frequencyHz: (cycles * RATE) / FRAME };
}

/** A settled reading around an analysis, as the live meter reports it once it agrees with itself. */
function settled(analysis: HarmonicAnalysis): Reading {
  return { ...analysis, sequence: 7, sampleRateHz: RATE, frameSize: FRAME, discontinuities: 0, settled: true, settleProgress: 1, settleRemainingS: 0, subAudioDbfs: null };
}

/** The real analyzer on a Fourier series, the fundamental's frequency known (coherent, whole cycles). */
function analysed(cycles: number, amplitudes: Record<number, number>, harmonicCount = 10): Reading {
  const { samples, frequencyHz } = fourierSeries(cycles, amplitudes);
  const analysis = new FrameAnalyzer(FRAME, RATE, { harmonicCount }).analyze(samples, createHarmonicAnalysis(), frequencyHz);
  // The analyzer reuses its objects; the step keeps what it is given.
  return settled(structuredClone(analysis));
}

/** A reading built by hand: a tone at `levelDbfs` and nothing else measured (no harmonics). */
/** The harmonic orders the station's meter counts (H2–H10). */
const ORDERS = [2, 3, 4, 5, 6, 7, 8, 9, 10];

function handReading(frequencyHz: number, levelDbfs: number, overrides: Partial<Reading> = {}): Reading {
  return settled({
    ...createHarmonicAnalysis(),
    mode: 'coherent',
    fundamental: { frequencyHz, levelDbfs, phaseDeg: 0 },
    measuredFundamentalHz: frequencyHz,
    flags: levelDbfs < -80 ? ['no-signal'] : [],
    // A pure tone: the meter's H2–H10 all counted, at its floor (those at or past Nyquist listed as
    // such); with no signal the meter counts none, as FrameAnalyzer does.
    ...(levelDbfs >= -80 && !overrides.flags?.includes('no-signal') && {
      harmonics: ORDERS.filter((n) => n * frequencyHz < RATE / 2).map((order) => ({ order, frequencyHz: order * frequencyHz, levelDbc: FLOOR_DB, phaseDeg: 0 })),
      harmonicsAboveNyquist: ORDERS.filter((n) => n * frequencyHz >= RATE / 2),
    }),
    // An interface's own noise, about −140 dBFS unweighted (common practice for a 24-bit converter,
    // from memory): no real input reads digital silence.
    noiseDbfs: -140,
    noiseAWeightedDbfs: -142,
    ...overrides,
  });
}

const expectMeasured = (outcome: CheckOutcome): CheckResult => {
  if (!outcome.ok) throw new Error(`refused: ${outcome.refusal}`);
  return outcome.result;
};

const distortion = (frequencyHz: number, levelDbfs: number, limits: Extract<CheckStep, { kind: 'distortion' }>['limits']): CheckStep => ({
  id: 'thd',
  title: 'Distortion',
  kind: 'distortion',
  instructions: ['The generator plays the tone.'],
  frequencyHz,
  level: { value: levelDbfs, unit: 'dBFS' },
  limits,
  onFail: 'continue',
});

const on = (frequencyHz: number, levelDbfs: number) => ({ on: true, frequencyHz, levelDbfs });
const OFF = { on: false, frequencyHz: 1000, levelDbfs: -120 };

// The demo procedure file, checked as the app checks it.
const demoCheck = checkProcedureFile(readFileSync(new URL('../../resources/procedures/mg20-lf-trim.json', import.meta.url), 'utf8'));
if (!demoCheck.ok) throw new Error('the demo procedure file does not validate');
const DEMO: ProcedureFile = demoCheck.procedure;
const demoStep = (id: string) => DEMO.steps.find((s) => s.id === id) as CheckStep;

// ---- distortion ------------------------------------------------------------------------------

describe('distortion: THD and harmonics of a Fourier series (THD = √(Σ aₙ²)/a₁, IEEE 1241)', () => {
  const cycles = 341; // odd, whole cycles in the frame: 999.02 Hz at 48 kHz, coherent
  const frequencyHz = (cycles * RATE) / FRAME;
  const a1 = 10 ** (-12 / 20); // −12 dBFS peak (AES17: a full-scale sine is 0 dBFS)

  it('H3 at 1 % of the fundamental is THD −40 dB and H3 −40 dBc', () => {
    const reading = analysed(cycles, { 1: a1, 3: 0.01 * a1 });
    const expected = 20 * Math.log10(0.01); // −40 dB
    const step = distortion(1000, -12, { thdDb: { high: -30, unit: 'dB' }, harmonicsDbc: { H3: { high: -30, unit: 'dBc' } } });
    const result = expectMeasured(measureCheckStep(step, { stimulus: on(frequencyHz, -12), levels: null, readings: [{ channel: 1, reading, inputDbuAtFullScale: null }] }));
    const thd = result.measurements.find((m) => m.quantity === 'thdDb')!;
    const h3 = result.measurements.find((m) => m.quantity === 'harmonicsDbc.H3')!;
    expect(thd.value).toBeCloseTo(expected, 2);
    expect(h3.value).toBeCloseTo(expected, 2);
    // The limits are stored as they were, with the verdict against them.
    expect(thd).toMatchObject({ unit: 'dB', low: null, high: -30, verdict: 'pass' });
    expect(result.verdict).toBe('pass');
  });

  it('H2 at 0.5 % and H3 at 0.5 % is THD 20·log10(√(0.005² + 0.005²)) ≈ −43.01 dB', () => {
    const reading = analysed(cycles, { 1: a1, 2: 0.005 * a1, 3: 0.005 * a1 });
    const expected = 20 * Math.log10(Math.sqrt(0.005 ** 2 + 0.005 ** 2));
    // A limit 0.5 dB under the true THD: a THD read as H3 alone (−46 dB) would pass it.
    const step = distortion(1000, -12, { thdDb: { high: expected - 0.5, unit: 'dB' } });
    const result = expectMeasured(measureCheckStep(step, { stimulus: on(frequencyHz, -12), levels: null, readings: [{ channel: 1, reading, inputDbuAtFullScale: null }] }));
    expect(result.measurements[0].value).toBeCloseTo(expected, 2);
    expect(result.verdict).toBe('fail');
    expect(result.reasons[0]).toMatch(/THD −43\.0 dB is above the high limit of −43\.5 dB/);
  });

  it('refuses a reading that is not of the stimulus (a 50 Hz tone while the generator plays 1 kHz)', () => {
    const reading = handReading(50, -12);
    const step = distortion(1000, -12, { thdDb: { high: -60, unit: 'dB' } });
    const outcome = measureCheckStep(step, { stimulus: on(1000, -12), levels: null, readings: [{ channel: 1, reading, inputDbuAtFullScale: null }] });
    expect(outcome.ok).toBe(false);
    if (!outcome.ok) expect(outcome.refusal).toMatch(/50\.00 Hz, not the generator's 1000\.0 Hz/);
  });

  it('refuses a generator that is not at the step level', () => {
    const reading = handReading(1000, -6);
    const outcome = measureCheckStep(distortion(1000, -12, { thdDb: { high: -60, unit: 'dB' } }), { stimulus: on(1000, -6), levels: null, readings: [{ channel: 1, reading, inputDbuAtFullScale: null }] });
    expect(outcome.ok).toBe(false);
  });
});

describe('a distortion reading must be of about the level the unit delivers', () => {
  const cycles = 341;
  const frequencyHz = (cycles * RATE) / FRAME;
  const step = distortion(1000, -12, { thdDb: { high: -60, unit: 'dB' } });

  it('refuses a reading 30 dB below the level played (wrong channel, bypassed unit): a clean tone there is not the unit’s', () => {
    // A clean −42 dBFS tone: THD −∞ would pass any limit. A line stage is within a few dB of unity
    // gain (common practice), so 30 dB low is not the unit's answer to −12 dBFS.
    const outcome = measureCheckStep(step, { stimulus: on(frequencyHz, -12), levels: null, readings: [{ channel: 1, reading: handReading(frequencyHz, -42), inputDbuAtFullScale: null }] });
    expect(outcome.ok).toBe(false);
    if (!outcome.ok) expect(outcome.refusal).toMatch(/below the .* expected: check the capture channel/);
    // At the level played it is judged.
    expect(measureCheckStep(step, { stimulus: on(frequencyHz, -12), levels: null, readings: [{ channel: 1, reading: handReading(frequencyHz, -12), inputDbuAtFullScale: null }] }).ok).toBe(true);
  });

  it('on a calibrated station the window is centred on the dBu played, read at the input (dBu definition)', () => {
    // +4 dBu played into a unity-gain unit; the input reads full scale at 2.0 V RMS (+8.24 dBu), so
    // +4 dBu reads 20·log10(√0.6·10^(4/20) / 2.0) ≈ −4.24 dBFS there.
    const levels: StationLevels = { outputDbuAtFullScale: dbuOfVolts(4.0), inputDbuAtFullScale: dbuOfVolts(2.0) };
    const demo = demoStep('thd-1khz');
    // The generator plays +4 dBu as its ratio to the output's 4.0 V full scale.
    const played = 20 * Math.log10((Math.sqrt(0.6) * 10 ** (4 / 20)) / 4.0);
    const atInput = 20 * Math.log10((Math.sqrt(0.6) * 10 ** (4 / 20)) / 2.0);
    const judged = (levelDbfs: number) =>
      measureCheckStep(demo, { stimulus: on(1000, played), levels, readings: [{ channel: 1, reading: handReading(1000, levelDbfs), inputDbuAtFullScale: levels.inputDbuAtFullScale }] }).ok;
    expect(judged(atInput)).toBe(true);
    expect(judged(atInput - 25)).toBe(false);
    expect(judged(atInput + 4)).toBe(true);
  });

  it('refuses a THD limit at 10 kHz on 48 kHz sampling: only H2 (20 kHz) lies below Nyquist (24 kHz)', () => {
    const c10k = 3413; // 9998.4 Hz, whole cycles
    const f = (c10k * RATE) / FRAME;
    const reading = analysed(c10k, { 1: 0.25, 2: 0.25 * 1e-4, 3: 0.25 * 1e-2 });
    // H3 at 1 % (−40 dB) is real and above Nyquist: THD from H2 alone (−80 dB) would pass −64 dB.
    const outcome = measureCheckStep(distortion(10000, -12, { thdDb: { high: -64, unit: 'dB' } }), { stimulus: on(f, -12), levels: null, readings: [{ channel: 1, reading, inputDbuAtFullScale: null }] });
    expect(outcome.ok).toBe(false);
    // Nyquist: H3 is read only when 3·f < fs/2, i.e. fs > 6·f ≈ 60 kHz.
    if (!outcome.ok) expect(outcome.refusal).toMatch(/only H2 lies below Nyquist .*sample rate above 60 kHz/);
    // The demo's 10 kHz step limits H2 by name, which 48 kHz can read (2 × 10 kHz < 24 kHz).
    const demoH2 = expectMeasured(measureCheckStep({ ...demoStep('thd-10khz'), level: { value: -12, unit: 'dBFS' } } as CheckStep, { stimulus: on(f, -12), levels: null, readings: [{ channel: 1, reading, inputDbuAtFullScale: null }] }));
    expect(demoH2.measurements[0].quantity).toBe('harmonicsDbc.H2');
    expect(demoH2.measurements[0].value).toBeCloseTo(-80, 1);
  });
});

describe('the level of harmonic n: one policy when it is missing', () => {
  it('H3 of a 10 kHz tone at 48 kHz lies above Nyquist (30 kHz > fs/2 = 24 kHz): said, never a number', () => {
    const cycles = 3413; // 9998.4 Hz, whole cycles
    const reading = analysed(cycles, { 1: 0.25 });
    const level = harmonicLevel(reading, 3);
    expect(level).toMatchObject({ measured: false, reason: 'above-nyquist' });
    const step = distortion(10000, -12, { harmonicsDbc: { H3: { high: -60, unit: 'dBc' } } });
    const result = expectMeasured(measureCheckStep(step, { stimulus: on((cycles * RATE) / FRAME, -12), levels: null, readings: [{ channel: 1, reading, inputDbuAtFullScale: null }] }));
    // No value is invented for it, and an unmeasured limit is not a met one.
    expect(result.measurements[0]).toMatchObject({ quantity: 'harmonicsDbc.H3', value: null, verdict: 'fail' });
    expect(result.measurements[0].note).toMatch(/Nyquist/);
  });

  it('a harmonic the meter did not count is "not measured" (meter counting H2–H3, H5 asked)', () => {
    const reading = analysed(341, { 1: 0.25, 5: 0.0025 }, 3);
    expect(harmonicLevel(reading, 5)).toMatchObject({ measured: false, reason: 'not-measured' });
    // The one counted is read: H2 absent from the series lies at the floor of the analysis, far below −100 dBc.
    const h2 = harmonicLevel(reading, 2);
    expect(h2.measured && h2.levelDbc < -100).toBe(true);
  });
});

// ---- levels in dBu -----------------------------------------------------------------------------

describe('levels from the station calibration (dBu definition: 0 dBu = √0.6 V RMS)', () => {
  // Output: a full-scale sine is 1.0 V RMS at the generator's terminals; input: 2.0 V RMS reads full scale.
  const levels: StationLevels = { outputDbuAtFullScale: dbuOfVolts(1.0), inputDbuAtFullScale: dbuOfVolts(2.0) };

  it('a dBu level becomes the dBFS that gives that voltage: +4 dBu on a 4.0 V full scale', () => {
    // +4 dBu is √0.6·10^(4/20) ≈ 1.228 V; its ratio to the 4.0 V of full scale is its dBFS.
    const expected = 20 * Math.log10((Math.sqrt(0.6) * 10 ** (4 / 20)) / 4.0);
    const outcome = generatorFor(demoStep('thd-14hz'), { ...levels, outputDbuAtFullScale: dbuOfVolts(4.0) });
    expect(outcome.ok).toBe(true);
    expect(outcome.ok && outcome.request.on && outcome.request.levelDbfs).toBeCloseTo(expected, 9);
  });

  it('gain of a ×2 voltage stage is 20·log10(2) dB from the calibrated output and input levels', () => {
    // Generator at −20 dBFS: 0.1 V into the unit; the unit gives 0.2 V, which reads 20·log10(0.2/2.0) dBFS.
    const step: CheckStep = { ...demoStep('gain-1khz'), level: { value: -20, unit: 'dBFS' }, limits: { gainDb: { low: 5.5, high: 6.5, unit: 'dB' } } } as CheckStep;
    const reading = handReading(1000, 20 * Math.log10(0.2 / 2.0));
    const result = expectMeasured(measureCheckStep(step, { stimulus: on(1000, -20), levels, readings: [{ channel: 1, reading, inputDbuAtFullScale: levels.inputDbuAtFullScale }] }));
    expect(result.measurements[0].value).toBeCloseTo(20 * Math.log10(2), 9);
    expect(result.measurements[0]).toMatchObject({ quantity: 'gainDb', unit: 'dB', low: 5.5, high: 6.5, verdict: 'pass' });
    // The demo's own limits (unity ± 0.5 dB) fail it.
    const demo = expectMeasured(measureCheckStep({ ...step, limits: demoStep('gain-1khz').limits } as CheckStep, { stimulus: on(1000, -20), levels, readings: [{ channel: 1, reading, inputDbuAtFullScale: levels.inputDbuAtFullScale }] }));
    expect(demo.verdict).toBe('fail');
  });

  it('A-weighted noise in dBu is the dBFS figure (AES17: referred to a full-scale sine) on the input calibration', () => {
    // −100 dBFS of a 2.0 V RMS full-scale sine is 2.0·10^(−100/20) V RMS of noise.
    const expected = dbuOfVolts(2.0 * 10 ** (-100 / 20));
    // The unweighted figure is different, so a step reading the wrong one is caught. Summed over the
    // step's own 22 Hz–22 kHz, as the demo file states its band.
    const reading = handReading(0, FLOOR_DB, { noiseAWeightedDbfs: -100, noiseDbfs: -94, bandHz: { lowHz: 22, highHz: 22000 } });
    const result = expectMeasured(measureCheckStep(demoStep('noise-a'), { stimulus: OFF, levels, readings: [{ channel: 1, reading, inputDbuAtFullScale: levels.inputDbuAtFullScale }] }));
    expect(result.measurements[0].value).toBeCloseTo(expected, 9);
    // The demo limit is −85 dBu; −100 dBFS on 2.0 V is about −91.8 dBu.
    expect(result.measurements[0]).toMatchObject({ quantity: 'noiseDbu', unit: 'dBu', high: -85, verdict: 'pass' });
  });

  it('refuses a noise reading summed over another band than the step states (AES17: noise is stated with its band)', () => {
    // The meter's own 20 Hz–20 kHz holds less noise than the demo step's 22 Hz–22 kHz: another quantity.
    const reading = handReading(0, FLOOR_DB, { noiseAWeightedDbfs: -100, noiseDbfs: -94, bandHz: { lowHz: 20, highHz: 20000 } });
    const outcome = measureCheckStep(demoStep('noise-a'), { stimulus: OFF, levels, readings: [{ channel: 1, reading, inputDbuAtFullScale: levels.inputDbuAtFullScale }] });
    expect(outcome.ok).toBe(false);
    if (!outcome.ok) expect(outcome.refusal).toMatch(/22\.00 Hz–22000 Hz/);
    // At 44.1 kHz the meter can sum only up to Nyquist, 22 050 Hz: a band cut there is the step's band.
    const at44k = handReading(0, FLOOR_DB, { sampleRateHz: 44100, noiseAWeightedDbfs: -100, noiseDbfs: -94, bandHz: { lowHz: 22, highHz: 22000 } });
    expect(measureCheckStep(demoStep('noise-a'), { stimulus: OFF, levels, readings: [{ channel: 1, reading: at44k, inputDbuAtFullScale: levels.inputDbuAtFullScale }] }).ok).toBe(true);
  });

  it('refuses a noise reading taken with the generator on', () => {
    const outcome = measureCheckStep(demoStep('noise-a'), { stimulus: on(1000, -12), levels, readings: [{ channel: 1, reading: handReading(1000, -12), inputDbuAtFullScale: levels.inputDbuAtFullScale }] });
    expect(outcome.ok).toBe(false);
  });

  it('hum is the power sum of the mains components the step counts, in dBu, against its limit', () => {
    const components = [
      { order: 1, frequencyHz: 50, levelDbfs: -80 },
      { order: 2, frequencyHz: 100, levelDbfs: -83 },
      { order: 3, frequencyHz: 150, levelDbfs: -90 },
    ];
    const reading = handReading(50, -80, { hum: { frequencyHz: 50, levelDbfs: -80, components }, flags: ['no-signal'] });
    const hum = { ...(demoStep('hum') as Extract<CheckStep, { kind: 'hum' }>), mainsHarmonics: 2 };
    // Uncorrelated tones add in power: 10·log10(10^(−8) + 10^(−8.3)) dBFS, then + the input's dBu at full scale.
    const expected = 10 * Math.log10(10 ** (-80 / 10) + 10 ** (-83 / 10)) + dbuOfVolts(2.0);
    const result = expectMeasured(measureCheckStep({ ...hum, limits: { humDbu: { high: expected + 0.1, unit: 'dBu' } } }, { stimulus: OFF, levels, readings: [{ channel: 1, reading, inputDbuAtFullScale: levels.inputDbuAtFullScale }] }));
    expect(result.measurements[0].value).toBeCloseTo(expected, 9);
    expect(result.verdict).toBe('pass');
    const over = expectMeasured(measureCheckStep({ ...hum, limits: { humDbu: { high: expected - 0.1, unit: 'dBu' } } }, { stimulus: OFF, levels, readings: [{ channel: 1, reading, inputDbuAtFullScale: levels.inputDbuAtFullScale }] }));
    expect(over.verdict).toBe('fail');
    // Asked for five components and given three (250 Hz is far below Nyquist, so the meter should
    // have read it): the missing two may be the loudest, so there is no value and no pass.
    const five = expectMeasured(measureCheckStep({ ...hum, mainsHarmonics: 5 }, { stimulus: OFF, levels, readings: [{ channel: 1, reading, inputDbuAtFullScale: levels.inputDbuAtFullScale }] }));
    expect(five.measurements[0]).toMatchObject({ value: null, verdict: 'fail' });
    expect(five.measurements[0].note).toMatch(/harmonics 4, 5 not read/);
  });

  it('the demo hum step (five mains components) sums rectifier buzz at 200 and 250 Hz read by the real meter', () => {
    // 50 Hz mains (IEC 60038) with buzz on its 4th and 5th multiples (a rectifier's, common practice),
    // and no tone from the unit: the meter's strongest tone is then the loudest hum component.
    const n = FRAME;
    const samples = new Float64Array(n);
    const humDbfs: Record<number, number> = { 1: -100, 2: -95, 4: -88, 5: -90 };
    for (const [order, dbfs] of Object.entries(humDbfs)) {
      const a = 10 ** (dbfs / 20);
      for (let i = 0; i < n; i++) samples[i] += a * Math.sin((2 * Math.PI * 50 * Number(order) * i) / RATE + Number(order));
    }
    // The input's own noise, −140 dBFS RMS (no real input reads digital silence): 50 dB under the buzz.
    const noise = gaussian(seededRandom(5));
    for (let i = 0; i < n; i++) samples[i] += 10 ** (-140 / 20) * noise();
    const analysis = new FrameAnalyzer(FRAME, RATE, { mainsHz: 50 }).analyze(samples, createHarmonicAnalysis(), null);
    const reading = settled({ ...structuredClone(analysis), bandHz: { lowHz: 22, highHz: 22000 } });
    const result = expectMeasured(measureCheckStep(demoStep('hum'), { stimulus: OFF, levels, readings: [{ channel: 1, reading, inputDbuAtFullScale: levels.inputDbuAtFullScale }] }));
    // Uncorrelated tones add in power; dBFS of a sine (AES17) plus the input's dBu at full scale.
    const expected = 10 * Math.log10(Object.values(humDbfs).reduce((sum, l) => sum + 10 ** (l / 10), 0)) + dbuOfVolts(2.0);
    expect(Math.abs((result.measurements[0].value as number) - expected)).toBeLessThan(0.5);
    // About −78 dBu against the demo's −80 dBu limit: buzz the old three-order sum (−86 dBu) passed.
    expect(result.verdict).toBe('fail');
  });

  it('refuses noise and hum read on digital silence, and a noise figure below the thermal noise of a 150 Ω source (Johnson–Nyquist)', () => {
    // Digital silence: an input nothing reaches, which would pass any noise or hum limit.
    const silent = handReading(0, FLOOR_DB, { noiseDbfs: FLOOR_DB, noiseAWeightedDbfs: FLOOR_DB, bandHz: { lowHz: 22, highHz: 22000 } });
    for (const id of ['noise-a', 'hum']) {
      const outcome = measureCheckStep(demoStep(id), { stimulus: OFF, levels, readings: [{ channel: 1, reading: silent, inputDbuAtFullScale: levels.inputDbuAtFullScale }] });
      expect(outcome.ok, id).toBe(false);
      if (!outcome.ok) expect(outcome.refusal).toMatch(/digital silence/);
    }
    // v = √(4kTRB): k = 1.380649e−23 J/K (SI 2019), T = 290 K, R = 150 Ω, B = 22 kHz − 22 Hz; dBu = 20·log10(v/√0.6).
    const thermalDbu = 20 * Math.log10(Math.sqrt(4 * 1.380649e-23 * 290 * 150 * (22000 - 22)) / Math.sqrt(0.6)); // ≈ −130.6 dBu
    const noiseAt = (dbu: number) =>
      handReading(0, FLOOR_DB, { noiseDbfs: dbu - levels.inputDbuAtFullScale, noiseAWeightedDbfs: dbu - levels.inputDbuAtFullScale - 2, bandHz: { lowHz: 22, highHz: 22000 } });
    const below = measureCheckStep(demoStep('noise-a'), { stimulus: OFF, levels, readings: [{ channel: 1, reading: noiseAt(thermalDbu - 1), inputDbuAtFullScale: levels.inputDbuAtFullScale }] });
    expect(below.ok).toBe(false);
    if (!below.ok) expect(below.refusal).toMatch(/below the thermal noise of a 150 Ω source/);
    expect(measureCheckStep(demoStep('noise-a'), { stimulus: OFF, levels, readings: [{ channel: 1, reading: noiseAt(thermalDbu + 1), inputDbuAtFullScale: levels.inputDbuAtFullScale }] }).ok).toBe(true);
  });

  it('judges THD only on a reading that counted H2–H10: one that stopped at H3 would leave out H5 (THD sums every harmonic, IEEE 1241)', () => {
    const step = distortion(1000, -12, { thdDb: { high: -50, unit: 'dB' } });
    const full = handReading(1000, -12);
    expect(measureCheckStep(step, { stimulus: on(1000, -12), levels: null, readings: [{ channel: 1, reading: full, inputDbuAtFullScale: null }] }).ok).toBe(true);
    const short = { ...full, harmonics: full.harmonics.filter((h) => h.order <= 3) };
    const outcome = measureCheckStep(step, { stimulus: on(1000, -12), levels: null, readings: [{ channel: 1, reading: short, inputDbuAtFullScale: null }] });
    expect(outcome.ok).toBe(false);
    if (!outcome.ok) expect(outcome.refusal).toMatch(/did not count H4, H5, H6, H7, H8, H9, H10/);
  });

  it('refuses noise and hum readings holding a tone with the generator off (a stray 1 kHz tone, an oscillating unit)', () => {
    // A 1 kHz tone at −10 dBFS is neither mains (50 or 60 Hz, IEC 60038) nor a multiple of it up to the 10th.
    const tone = handReading(1000, -10, { noiseAWeightedDbfs: -120, noiseDbfs: -118, bandHz: { lowHz: 22, highHz: 22000 } });
    for (const id of ['noise-a', 'hum']) {
      const outcome = measureCheckStep(demoStep(id), { stimulus: OFF, levels, readings: [{ channel: 1, reading: tone, inputDbuAtFullScale: levels.inputDbuAtFullScale }] });
      expect(outcome.ok, id).toBe(false);
      if (!outcome.ok) expect(outcome.refusal).toMatch(/tone at 1000 Hz is present with the generator off/);
    }
    // A unit oscillating at 7.3 kHz, far above mains' 10th multiple (600 Hz at 60 Hz), is refused alike.
    const oscillating = handReading(7300, -30, { bandHz: { lowHz: 22, highHz: 22000 } });
    expect(measureCheckStep(demoStep('noise-a'), { stimulus: OFF, levels, readings: [{ channel: 1, reading: oscillating, inputDbuAtFullScale: levels.inputDbuAtFullScale }] }).ok).toBe(false);
    // Loud 100 Hz (twice 50 Hz mains: rectifier ripple, common practice) is hum, not a stray tone: judged.
    const ripple = handReading(100, -70, { noiseAWeightedDbfs: -120, noiseDbfs: -118, bandHz: { lowHz: 22, highHz: 22000 } });
    expect(measureCheckStep(demoStep('hum'), { stimulus: OFF, levels, readings: [{ channel: 1, reading: ripple, inputDbuAtFullScale: levels.inputDbuAtFullScale }] }).ok).toBe(true);
  });

  it('with no hum above the noise, the level each asked order had to exceed bounds it: their power sum, said to be a bound', () => {
    // The meter fitted all eight orders at 50 Hz and none exceeded −110 dBFS: the demo's five orders
    // are each at most that, and uncorrelated tones add in power: −110 + 10·log10(5) dBFS.
    const humSearch = { mainsHz: 50 as const, orders: [1, 2, 3, 4, 5, 6, 7, 8], thresholdDbfs: -110 };
    const reading = handReading(0, FLOOR_DB, { hum: null, humSearch, noiseDbfs: -90, noiseAWeightedDbfs: -93 });
    const result = expectMeasured(measureCheckStep(demoStep('hum'), { stimulus: OFF, levels, readings: [{ channel: 1, reading, inputDbuAtFullScale: levels.inputDbuAtFullScale }] }));
    expect(result.measurements[0].value).toBeCloseTo(-110 + 10 * Math.log10(5) + dbuOfVolts(2.0), 9);
    expect(result.measurements[0].note).toMatch(/upper bound.*harmonics 1, 2, 3, 4, 5.*−110\.0 dBFS/);
    // A reading that does not say what hum had to exceed gives no bound: no value, no pass.
    const unsaid = expectMeasured(measureCheckStep(demoStep('hum'), { stimulus: OFF, levels, readings: [{ channel: 1, reading: { ...reading, humSearch: null }, inputDbuAtFullScale: levels.inputDbuAtFullScale }] }));
    expect(unsaid.measurements[0]).toMatchObject({ value: null, verdict: 'fail' });
    // An asked order the meter neither fitted nor read as a tone (hidden under a multiple of a noise
    // peak it does not report): it may be the loudest, so no value either.
    const hidden = expectMeasured(measureCheckStep(demoStep('hum'), { stimulus: OFF, levels, readings: [{ channel: 1, reading: { ...reading, humSearch: { ...humSearch, orders: [1, 2, 3, 5, 6, 7, 8] } }, inputDbuAtFullScale: levels.inputDbuAtFullScale }] }));
    expect(hidden.measurements[0]).toMatchObject({ value: null, verdict: 'fail' });
    expect(hidden.measurements[0].note).toMatch(/harmonic 4 not read/);
  });

  it('hum louder than the noise, read by a quiet meter as its strongest tone, is not bounded by the noise alone', () => {
    // The generator off, 50 Hz hum at −85 dBFS is the strongest tone: the meter takes it for its
    // fundamental, fits the other orders (none above −110 dBFS) and reports no hum. The tone (AES17:
    // dBFS of a sine) and the four other orders' bounds add in power.
    const humSearch = { mainsHz: 50 as const, orders: [2, 3, 4, 5, 6, 7, 8], thresholdDbfs: -110 };
    const reading = handReading(50, -85, { hum: null, humSearch, noiseDbfs: -100, noiseAWeightedDbfs: -103 });
    const result = expectMeasured(measureCheckStep(demoStep('hum'), { stimulus: OFF, levels, readings: [{ channel: 1, reading, inputDbuAtFullScale: levels.inputDbuAtFullScale }] }));
    const expected = 10 * Math.log10(10 ** (-85 / 10) + 4 * 10 ** (-110 / 10)) + dbuOfVolts(2.0);
    expect(result.measurements[0].value).toBeCloseTo(expected, 9);
    expect(result.measurements[0].note).toMatch(/harmonic 1 read as the strongest tone/);
    // 2 V RMS at full scale is +8.2 dBu, so −85 dBFS is about −77 dBu: over the demo's −80 dBu limit.
    expect(result.verdict).toBe('fail');
  });
});

describe('hum that does not stand out: bounded by the noise in the meter’s bandwidth, not the whole band', () => {
  // Input: 2.0 V RMS reads full scale (+8.24 dBu, dBu definition).
  const levels: StationLevels = { outputDbuAtFullScale: dbuOfVolts(1.0), inputDbuAtFullScale: dbuOfVolts(2.0) };
  // The meter's window: the 7-term Blackman-Harris (Albrecht 2001's coefficients); its ENBW by
  // Harris 1978's definition; the 10 dB margin is the meter's rule for hum standing out.
  const enbw = enbwBinsOfCosineSum(BLACKMAN_HARRIS_7.coefficients);
  const MARGIN_DB = 10;
  const noise = (seed: number, sigma: number) => {
    const random = gaussian(seededRandom(seed));
    return Float64Array.from({ length: FRAME }, () => sigma * random());
  };
  const judge = (samples: Float64Array, step: CheckStep) => {
    const analysis = new FrameAnalyzer(FRAME, RATE, { mainsHz: 50 }).analyze(samples, createHarmonicAnalysis(), null);
    const reading = settled(structuredClone(analysis));
    return { reading, result: expectMeasured(measureCheckStep(step, { stimulus: OFF, levels, readings: [{ channel: 1, reading, inputDbuAtFullScale: levels.inputDbuAtFullScale }] })) };
  };
  const varianceOf = (samples: Float64Array) => samples.reduce((sum, x) => sum + x * x, 0) / samples.length;

  it('white noise over the hum limit in the whole band, well under it in the window’s bandwidth near mains: passes', () => {
    const samples = noise(17, 10 ** (-82 / 20));
    const variance = varianceOf(samples);
    // The premise, from the construction: white noise's one-sided density is σ²/(fs/2), so the
    // meter's 20 Hz–20 kHz holds σ²·19 980/24 000 of mean square; as dBFS of a sine (AES17), in dBu
    // on this input it is about −71 dBu, over the demo's −80 dBu limit.
    const bandDbu = 10 * Math.log10((variance * (20000 - 20)) / (RATE / 2) / 0.5) + levels.inputDbuAtFullScale;
    expect(bandDbu).toBeGreaterThan(-80 + 5);
    // Each of the demo's five orders is at most 10 dB over the noise in ENBW bins of N = 16 384 at
    // 48 kHz, and they add in power: 10·log10(5) dB more.
    const expected = levelAboveWhiteNoiseDbfs(variance, FRAME, enbw, MARGIN_DB) + 10 * Math.log10(5) + levels.inputDbuAtFullScale;
    expect(expected).toBeLessThan(-80 - 5);
    const { reading, result } = judge(samples, demoStep('hum'));
    expect(reading.hum).toBeNull();
    // Tolerance: the meter's noise is the mean of about 8000 bins (hundredths of a dB).
    expect(Math.abs((result.measurements[0].value as number) - expected)).toBeLessThan(0.3);
    expect(result.measurements[0].note).toMatch(/upper bound/);
    expect(result.verdict).toBe('pass');
  });

  it('a real 50 Hz component 2 dB under the level hum must exceed to stand out is inside the bound', () => {
    const samples = noise(23, 10 ** (-82 / 20));
    const variance = varianceOf(samples);
    const componentDbfs = levelAboveWhiteNoiseDbfs(variance, FRAME, enbw, MARGIN_DB) - 2;
    // A sine of peak A is at 20·log10(A) dBFS (AES17).
    const peak = 10 ** (componentDbfs / 20);
    for (let i = 0; i < FRAME; i++) samples[i] += peak * Math.sin((2 * Math.PI * 50 * i) / RATE + 0.7);
    const componentDbu = componentDbfs + levels.inputDbuAtFullScale;
    // Mains alone asked: the bound is that one order's, with nothing from other orders to hide a bound too low.
    const mainsOnly = { ...(demoStep('hum') as Extract<CheckStep, { kind: 'hum' }>), mainsHarmonics: 1 };
    const { reading, result } = judge(samples, mainsOnly);
    // Under the threshold: the meter reports no hum, and the bound must still hold the component.
    expect(reading.hum).toBeNull();
    expect(result.measurements[0].value as number).toBeGreaterThanOrEqual(componentDbu);
    // A limit between the component and the bound fails: the bound cannot vouch for less.
    const between = expectMeasured(
      measureCheckStep({ ...mainsOnly, limits: { humDbu: { high: componentDbu + 0.5, unit: 'dBu' } } }, { stimulus: OFF, levels, readings: [{ channel: 1, reading, inputDbuAtFullScale: levels.inputDbuAtFullScale }] }),
    );
    expect(between.verdict).toBe('fail');
    // The demo's five orders: a value (every order fitted or read as a tone), and it holds the component.
    const five = judge(samples, demoStep('hum')).result.measurements[0];
    expect(five.value).not.toBeNull();
    expect(five.value as number).toBeGreaterThanOrEqual(componentDbu);
  });

  it('a noisy demo unit with no hum at all passes the demo hum step (it failed while the whole band bounded hum)', () => {
    // The demo batch's noisy driver (ten times the design's noise voltage) with its hum removed.
    // Its noise at the output is about 3e-4 V of 10 V full scale: −87.5 dBFS as a sine's level,
    // −69.5 dBu on the demo's +18 dBu input, 10 dB over the −80 dBu limit across the band.
    const parameters = { ...DEMO_UNIT_PARAMETERS, driverNoiseVolts: DEMO_UNIT_PARAMETERS.driverNoiseVolts * 10, humDbfs: -400 };
    const bench = new HeadlessBench(48000, parameters, 5, { expectedFundamentalHz: null, harmonicCount: 10, mainsHz: 50, stimulusLocked: true, chainFloorThdDb: null });
    bench.setStimulus(OFF, { expectedFundamentalHz: null, harmonicCount: 10, mainsHz: 50, stimulusLocked: true, chainFloorThdDb: null });
    const taken = bench.settle(20)!;
    expect(taken.reading.settled).toBe(true);
    const demoLevels: StationLevels = { outputDbuAtFullScale: 18, inputDbuAtFullScale: 18 };
    expect(taken.reading.noiseDbfs + 18).toBeGreaterThan(-80);
    const result = expectMeasured(measureCheckStep(demoStep('hum'), { stimulus: OFF, levels: demoLevels, readings: [{ channel: 1, reading: taken.reading, inputDbuAtFullScale: 18 }] }));
    expect(result.verdict).toBe('pass');
  });
});

// ---- limits, verdicts ------------------------------------------------------------------------

describe('limits are inclusive: low ≤ value ≤ high passes (docs/procedures.md, "Limits")', () => {
  it('a value exactly at the high bound passes, and one just above fails', () => {
    expect(judgeLimit(-60, { high: -60 })).toBe('pass');
    expect(judgeLimit(-59.99, { high: -60 })).toBe('fail');
  });
  it('a value exactly at the low bound passes, and one just below fails', () => {
    expect(judgeLimit(-0.5, { low: -0.5, high: 0.5 })).toBe('pass');
    expect(judgeLimit(-0.51, { low: -0.5, high: 0.5 })).toBe('fail');
  });
  it('no value is never a pass', () => {
    expect(judgeLimit(null, { high: 0 })).toBe('fail');
    expect(judgeLimit(Number.NaN, { high: 0 })).toBe('fail');
  });
});

describe('judgeUnit: PASS only when every step passed; "stop" ends the run (docs/procedures.md, "onFail")', () => {
  const pass = (stepId: string): StepOutcome => ({ stepId, verdict: 'pass', reasons: [] });
  const fail = (stepId: string, why: string): StepOutcome => ({ stepId, verdict: 'fail', reasons: [why] });
  const all = DEMO.steps.map((s) => pass(s.id));

  it('passes a unit whose every step passed', () => {
    expect(judgeUnit(DEMO, all)).toMatchObject({ verdict: 'pass', finished: true, stoppedAt: null, reasons: [] });
  });

  it('a failed "continue" step fails the unit, and the run goes on to its end', () => {
    const results = all.map((r) => (r.stepId === 'thd-20hz' ? fail('thd-20hz', 'THD −50.0 dB is above the high limit of −55.0 dB.') : r));
    const judged = judgeUnit(DEMO, results);
    expect(judged).toMatchObject({ verdict: 'fail', finished: true, stoppedAt: null });
    expect(judged.reasons).toEqual(['Step “thd-20hz” (Distortion at 20 Hz, working level (invented limits)) failed: THD −50.0 dB is above the high limit of −55.0 dB.']);
    expect(judged.steps.filter((s) => s.status === 'pass')).toHaveLength(DEMO.steps.length - 1);
  });

  it('a failed "stop" step ends the run as FAIL with its reason; the steps after it are not run', () => {
    const upTo = DEMO.steps.findIndex((s) => s.id === 'thd-14hz');
    const results = [...all.slice(0, upTo), fail('thd-14hz', 'THD −45.0 dB is above the high limit of −50.0 dB.')];
    const judged = judgeUnit(DEMO, results);
    expect(judged).toMatchObject({ verdict: 'fail', finished: true, stoppedAt: 'thd-14hz', nextStepId: null });
    expect(judged.reasons).toHaveLength(1);
    expect(judged.reasons[0]).toMatch(/thd-14hz.*stops the run: THD −45\.0 dB/);
    expect(judged.steps.slice(upTo + 1).every((s) => s.status === 'not-run')).toBe(true);
  });

  it('a step not run is not a pass, and the run is not finished', () => {
    const judged = judgeUnit(DEMO, all.filter((r) => r.stepId !== 'hum'));
    expect(judged).toMatchObject({ verdict: 'fail', finished: false, nextStepId: 'hum' });
    expect(judged.reasons).toEqual(['Step “hum” (Hum (invented limit)) was not run.']);
  });

  it('a repeated step counts by its latest result', () => {
    expect(judgeUnit(DEMO, [...all, fail('gain-1khz', 'low'), pass('gain-1khz')]).verdict).toBe('pass');
    expect(judgeUnit(DEMO, [...all, fail('gain-1khz', 'Gain 1.0 dB is above the high limit of 0.5 dB.')]).verdict).toBe('fail');
  });
});

// ---- calibration, two channels, the plan -------------------------------------------------------

describe('a step needing dBu on an uncalibrated station is refused (docs/procedures.md, requiresCalibration)', () => {
  it('refuses the generator for a dBu level, in words naming the step and what to do', () => {
    const outcome = generatorFor(demoStep('thd-14hz'), null);
    expect(outcome.ok).toBe(false);
    if (!outcome.ok) expect(outcome.refusal).toMatch(/“thd-14hz”.*4\.0 dBu.*calibrate it in Station settings/);
  });
  it('refuses to judge a noise step without a calibration, and the plan marks such steps blocked', () => {
    const outcome = measureCheckStep(demoStep('noise-a'), { stimulus: OFF, levels: null, readings: [{ channel: 1, reading: handReading(0, FLOOR_DB), inputDbuAtFullScale: null }] });
    expect(outcome.ok).toBe(false);
    const blocked = runPlan(DEMO, null).filter((s) => s.blocked !== null).map((s) => s.stepId);
    // Every step of the demo that plays or reads a dBu level, or measures gain.
    expect(blocked).toEqual(['thd-14hz', 'thd-20hz', 'thd-50hz', 'thd-1khz', 'thd-10khz', 'gain-1khz', 'noise-a', 'hum', 'response', 'max-level-1khz', 'ringing-20k']);
  });
  it('refuses a dBu level above what the calibrated output reaches at full scale', () => {
    // +4 dBu asked of an output whose full scale is 0.5 V RMS (about −3.8 dBu).
    expect(generatorFor(demoStep('thd-14hz'), { outputDbuAtFullScale: dbuOfVolts(0.5), inputDbuAtFullScale: 0 }).ok).toBe(false);
  });
});

describe('two channels: balance and crosstalk from the same drive', () => {
  const base = { title: 'Two channels', instructions: ['Both channels connected.'], frequencyHz: 1000, level: { value: -12, unit: 'dBFS' as const }, onFail: 'continue' as const, channels: [1, 2] as [number, number] };
  const stimulus = on(1000, -12);

  it('crosstalk is the undriven channel level relative to the driven one: 1 mV beside 1 V is −60 dB', () => {
    const step: CheckStep = { ...base, id: 'xtalk', kind: 'crosstalk', limits: { crosstalkDb: { high: -50, unit: 'dB' } } };
    const driven = handReading(1000, 20 * Math.log10(1.0));
    const quiet = handReading(1000, 20 * Math.log10(0.001), { measuredFundamentalHz: 50, noiseDbfs: -110 });
    // Both inputs read full scale at +18 dBu (an invented interface); −60 dB is 20·log10(0.001/1) (the decibel's definition).
    const result = expectMeasured(measureCheckStep(step, { stimulus, levels: null, readings: [{ channel: 1, reading: driven, inputDbuAtFullScale: 18 }, { channel: 2, reading: quiet, inputDbuAtFullScale: 18 }] }));
    expect(result.measurements[0].value).toBeCloseTo(-60, 9);
    expect(result.verdict).toBe('pass');
  });

  it('refuses a crosstalk read on digital silence (nothing reaches that input) and one reading sent for both channels', () => {
    // A unit's output always carries its own noise; exact digital silence means no cable or a
    // channel the interface does not deliver (common practice). −300 dB is the meter's floor.
    const step: CheckStep = { ...base, id: 'xtalk', kind: 'crosstalk', limits: { crosstalkDb: { high: -50, unit: 'dB' } } };
    const driven = handReading(1000, -12);
    const silent = handReading(1000, -300, { noiseDbfs: -300, noiseAWeightedDbfs: -300 });
    const silence = measureCheckStep(step, { stimulus, levels: null, readings: [{ channel: 1, reading: driven, inputDbuAtFullScale: 18 }, { channel: 2, reading: silent, inputDbuAtFullScale: 18 }] });
    expect(silence.ok).toBe(false);
    if (!silence.ok) expect(silence.refusal).toMatch(/Channel 2: its input reads digital silence/);
    // The same reading for both: a balance of exactly 0 dB that nothing measured.
    const balance: CheckStep = { ...base, id: 'bal', kind: 'balance', limits: { balanceDb: { low: -0.5, high: 0.5, unit: 'dB' } } };
    const twice = measureCheckStep(balance, { stimulus, levels: null, readings: [{ channel: 1, reading: driven, inputDbuAtFullScale: 18 }, { channel: 2, reading: { ...driven }, inputDbuAtFullScale: 18 }] });
    expect(twice.ok).toBe(false);
    if (!twice.ok) expect(twice.refusal).toMatch(/came with the same reading/);
  });

  it('two inputs without their own calibration are refused, never compared in dBFS as if their gains matched (common practice)', () => {
    // An interface's inputs differ by their gain settings: input 2 set 6 dB hotter than input 1 makes
    // a unit 6 dB out of balance read as balanced. Only calibrated inputs may be compared.
    const step: CheckStep = { ...base, id: 'bal', kind: 'balance', limits: { balanceDb: { low: -0.5, high: 0.5, unit: 'dB' } } };
    const one = handReading(1000, -12);
    const two = handReading(1000, -12);
    const outcome = measureCheckStep(step, { stimulus, levels: null, readings: [{ channel: 1, reading: one, inputDbuAtFullScale: null }, { channel: 2, reading: two, inputDbuAtFullScale: null }] });
    expect(outcome.ok).toBe(false);
    if (!outcome.ok) expect(outcome.refusal).toMatch(/channel 1 and 2 has no level calibration/);
    // The plan says so before anything is played: a calibration without the second input blocks the step.
    const procedure = { steps: [step] };
    expect(runPlan(procedure, { outputDbuAtFullScale: 18, inputDbuAtFullScale: 18 })[0].blocked).toMatch(/channel 2 has no level calibration/);
    expect(runPlan(procedure, { outputDbuAtFullScale: 18, inputDbuAtFullScale: 18, secondInputDbuAtFullScale: 12 })[0].blocked).toBeNull();
  });

  it('balance is the second channel gain minus the first; inputs calibrated differently are taken into account', () => {
    const step: CheckStep = { ...base, id: 'bal', kind: 'balance', limits: { balanceDb: { low: -0.5, high: 0.5, unit: 'dB' } } };
    // Both outputs are 1.0 V RMS; input 1 reads full scale at 2.0 V, input 2 at 4.0 V.
    const one = handReading(1000, 20 * Math.log10(1.0 / 2.0));
    const two = handReading(1000, 20 * Math.log10(1.0 / 4.0));
    const result = expectMeasured(measureCheckStep(step, { stimulus, levels: null, readings: [{ channel: 1, reading: one, inputDbuAtFullScale: dbuOfVolts(2.0) }, { channel: 2, reading: two, inputDbuAtFullScale: dbuOfVolts(4.0) }] }));
    expect(result.measurements[0].value).toBeCloseTo(0, 9);
    // Only one input calibrated: the levels cannot be compared.
    expect(measureCheckStep(step, { stimulus, levels: null, readings: [{ channel: 1, reading: one, inputDbuAtFullScale: dbuOfVolts(2.0) }, { channel: 2, reading: two, inputDbuAtFullScale: null }] }).ok).toBe(false);
  });
});

describe('generatorWanted: what the live readout and the step walk expect of the generator', () => {
  it('off for the safety notice, noise and hum; on for the trim and the tone checks; no claim with no step or a step that cannot run', () => {
    // docs/procedures.md: safety first (the notice is acknowledged before any tone), noise and hum
    // are measured with the generator off; the demo file's trim and distortion steps play a tone.
    const plan = runPlan(DEMO, { outputDbuAtFullScale: 18, inputDbuAtFullScale: 18 });
    expect(plan.map((s) => [s.stepId, generatorWanted(s)])).toEqual([
      ['safety', false],
      ['lf-trim', true],
      ['thd-14hz', true],
      ['thd-20hz', true],
      ['thd-50hz', true],
      ['thd-1khz', true],
      ['thd-10khz', true],
      ['gain-1khz', true],
      ['noise-a', false],
      ['hum', false],
      // The sweep is played once on its own with the tone off; max-level plays its tone, ringing its square.
      ['response', false],
      ['max-level-1khz', true],
      ['ringing-20k', true],
    ]);
    expect(generatorWanted(null)).toBeNull();
    // Uncalibrated, a dBu step cannot run: nothing is claimed of the generator for it.
    expect(generatorWanted(runPlan(DEMO, null).find((s) => s.stepId === 'thd-14hz')!)).toBeNull();
  });
});

describe('runPlan: the ordered steps and what each needs', () => {
  it('walks the demo notice → trim → checks in file order, the generator off for noise and hum', () => {
    const plan = runPlan(DEMO, { outputDbuAtFullScale: 18, inputDbuAtFullScale: 18 });
    expect(plan.map((s) => s.stepId)).toEqual(DEMO.steps.map((s) => s.id));
    expect(plan.map((s) => s.needs.kind)).toEqual(['acknowledge', 'trim', 'measure', 'measure', 'measure', 'measure', 'measure', 'measure', 'measure', 'measure', 'sweep', 'measure', 'scope']);
    const noise = plan.find((s) => s.stepId === 'noise-a')!.needs;
    expect(noise).toMatchObject({ kind: 'measure', generator: { on: false }, band: { lowHz: 22, highHz: 22000, weighting: 'A' } });
    // +4 dBu on an output whose full scale is +18 dBu: −14 dBFS (dBu and dBFS differ by a constant).
    expect(plan.find((s) => s.stepId === 'thd-14hz')!.needs).toMatchObject({ generator: { on: true, frequencyHz: 14, levelDbfs: -14, levelDbu: 4 } });
    expect(plan.every((s) => s.blocked === null)).toBe(true);
  });
});
