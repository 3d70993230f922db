// The ringing step judged from a scope record (shared/procedures/ringing.ts). Records are the
// square-wave response of a textbook second-order system (tests/support/step-response.ts), so
// every expected figure comes from Ogata, Modern Control Engineering (second-order transient
// response): overshoot exp(−ζπ/√(1−ζ²)), ringing at ωd = ωn√(1−ζ²), logarithmic decrement
// δ = 2πζ/√(1−ζ²) (ζ = δ/√(4π² + δ²)), and no overshoot at all for ζ ≥ 1.

import { describe, expect, it } from 'vitest';
import { envelopeAt, judgeScopeRecord, ringingStimulus, RECORD_FREQUENCY_TOLERANCE_PERCENT, SCOPE_TEXT_MAX, squareHzOfEdges } from '../../shared/procedures/ringing.ts';
import { checkProcedureFile, type RingingStep } from '../../shared/procedures/procedure-file.ts';
import { SQUARE_MAX_LEVEL_DBFS } from '../../shared/dsp/square-wave.ts';
import { drivenRecordText, RINGING_STEP, scopeRecordText } from '../support/ringing-procedure.ts';
import { textbookLogDecrement, textbookOvershoot, textbookRingHz } from '../support/step-response.ts';
import { readFileSync } from 'node:fs';
import { fileURLToPath } from 'node:url';

const judged = (step: RingingStep, text: string) => {
  const outcome = judgeScopeRecord(step, text, 'unit-0042.csv');
  if (!outcome.ok) throw new Error(outcome.refusal);
  return outcome;
};
const value = (o: ReturnType<typeof judged>, quantity: string) => o.measurements.find((m) => m.quantity === quantity)!;

describe('judging a ringing step from a scope record', () => {
  it.each([0.35, 0.45, 0.55])('reads ζ = %s against the textbook figures and judges them against the limits', (zeta) => {
    const system = { zeta, naturalHz: 300e3 };
    const o = judged(RINGING_STEP, scopeRecordText(system, 20e3));
    expect(Math.abs(value(o, 'ringFrequencyHz').value! / textbookRingHz(system) - 1)).toBeLessThan(0.01);
    // ζ from the textbook decrement, δ = 2πζ/√(1−ζ²), as the analysis defines it.
    const delta = textbookLogDecrement(zeta);
    expect(value(o, 'dampingRatio').value!).toBeCloseTo(delta / Math.sqrt(4 * Math.PI ** 2 + delta ** 2), 1);
    expect(Math.abs(value(o, 'overshootPercent').value! - 100 * textbookOvershoot(zeta))).toBeLessThan(1);
    // Limits: fd ≥ 100 kHz, ζ ≥ 0.3, overshoot ≤ 30 % (ζ = 0.35 overshoots 30.9 %), settling ≤ 20 µs.
    expect(o.verdict).toBe(100 * textbookOvershoot(zeta) > 30 ? 'fail' : 'pass');
    expect(o.measurements.map((m) => m.low ?? m.high)).toEqual([100_000, 0.3, 30, 20e-6]);
    expect(o.record).toMatchObject({ fileName: 'unit-0042.csv', channel: 0, channelName: 'CH1', flags: [] });
    expect(o.record.squareHz / 20e3).toBeCloseTo(1, 3);
  });

  it('fails a lightly damped unit by its damping ratio and overshoot, with the reasons', () => {
    const o = judged(RINGING_STEP, scopeRecordText({ zeta: 0.15, naturalHz: 300e3 }, 20e3));
    expect(o.verdict).toBe('fail');
    // Ogata: 15 % damping overshoots exp(−0.15π/√(1−0.0225)) = 62 % of the step.
    expect(o.reasons.join(' ')).toMatch(/Damping ratio 0\.1\d is below the low limit of 0\.30/);
    expect(o.reasons.join(' ')).toMatch(/Overshoot 6\d\.\d % is above the high limit of 30\.0 %/);
  });

  it('the plotted edge carries its fitted envelope: through the textbook peaks at t = kπ/ωd on e^{−ζωn t}', () => {
    const system = { zeta: 0.4, naturalHz: 300e3 };
    const o = judged(RINGING_STEP, scopeRecordText(system, 20e3));
    const { plot } = o.record;
    expect(plot.timeS.length).toBeGreaterThan(100);
    expect(plot.timeS.length).toBeLessThanOrEqual(600);
    expect(plot.polarity).toBe('rising');
    const wn = 2 * Math.PI * system.naturalHz;
    expect(plot.envelope!.decayPerS / (system.zeta * wn)).toBeCloseTo(1, 1);
    // Half a damped period after the first peak the envelope has fallen by e^{−δ/2}.
    const halfPeriod = 1 / (2 * textbookRingHz(system));
    const a = envelopeAt(plot, halfPeriod)!.upper - plot.finalLevelV;
    const b = envelopeAt(plot, 2 * halfPeriod)!.upper - plot.finalLevelV;
    expect(Math.log(a / b)).toBeCloseTo(textbookLogDecrement(system.zeta) / 2, 1);
  });

  it('an overdamped unit (ζ = 1.5: no overshoot, Ogata) is a result: no ring frequency (that limit is not met), ζ only from below', () => {
    // fn = 1 MHz: the unit's own edge (10–90 % in 0.9 µs) is fast enough for the step's 200 kHz.
    const o = judged(RINGING_STEP, scopeRecordText({ zeta: 1.5, naturalHz: 1e6 }, 20e3));
    expect(o.record.flags).toContain('no-ringing');
    expect(value(o, 'ringFrequencyHz')).toMatchObject({ value: null, verdict: 'fail' });
    // No overshoot, so ζ is at least that of an overshoot at the noise level: below 1 (any overshoot
    // at all means ζ < 1, Ogata), above the 0.3 limit, and said to be a lower bound.
    expect(value(o, 'dampingRatio')).toMatchObject({ verdict: 'pass' });
    expect(value(o, 'dampingRatio').value!).toBeGreaterThan(0.3);
    expect(value(o, 'dampingRatio').value!).toBeLessThan(1);
    expect(value(o, 'dampingRatio').note).toMatch(/lower bound.*no overshoot above the noise/);
    expect(value(o, 'overshootPercent').value!).toBeLessThan(1);
    expect(o.verdict).toBe('fail');
    expect(o.reasons.join(' ')).toMatch(/Ringing frequency was not measured: no ringing above the noise/);
    // A procedure that limits only overshoot and settling passes the same unit.
    const plain = judged({ ...RINGING_STEP, limits: { overshootPercent: { high: 30, unit: '%' }, settlingTimeS: { high: 20e-6, unit: 's' } } }, scopeRecordText({ zeta: 1.5, naturalHz: 1e6 }, 20e3));
    expect(plain.verdict).toBe('pass');
  });

  // Well damped: only the first overshoot stands above the noise (the second peak, M², is under it).
  const DAMPING_ONLY: RingingStep = { ...RINGING_STEP, limits: { dampingRatio: { low: 0.3, unit: 'ratio' }, overshootPercent: { high: 30, unit: '%' } } };
  it.each([0.6, 0.7, 0.8])('a well-damped unit (ζ = %s, one peak above the noise) meets a ζ ≥ 0.3 limit: ζ from its overshoot, a lower bound', (zeta) => {
    const o = judged(DAMPING_ONLY, scopeRecordText({ zeta, naturalHz: 1e6 }, 20e3));
    expect(o.record.flags).toContain('no-ringing');
    expect(o.verdict).toBe('pass');
    // Ogata: M = exp(−ζπ/√(1−ζ²)) inverts to ζ = −ln M/√(π² + ln² M), so the overshoot gives ζ back.
    expect(value(o, 'dampingRatio').value!).toBeCloseTo(zeta, 1);
    expect(value(o, 'dampingRatio').value!).toBeLessThanOrEqual(zeta + 0.01);
    expect(value(o, 'dampingRatio').note).toMatch(/a lower bound, from the overshoot M alone/);
    // Against a high limit a lower bound shows nothing: not measured, so not met.
    const bounded = judged({ ...DAMPING_ONLY, limits: { dampingRatio: { low: 0.3, high: 0.95, unit: 'ratio' } } }, scopeRecordText({ zeta, naturalHz: 1e6 }, 20e3));
    expect(value(bounded, 'dampingRatio')).toMatchObject({ value: null, verdict: 'fail' });
    expect(bounded.reasons.join(' ')).toMatch(/Damping ratio was not measured: a lower bound/);
    // The ring frequency stays unmeasured: a limit on it is not met.
    expect(value(judged({ ...DAMPING_ONLY, limits: { ringFrequencyHz: { low: 100e3, unit: 'Hz' } } }, scopeRecordText({ zeta, naturalHz: 1e6 }, 20e3)), 'ringFrequencyHz')).toMatchObject({ value: null, verdict: 'fail' });
  });

  it('a unit with ζ = 1.2 (no overshoot, Ogata) meets a ζ ≥ 0.3 limit as a lower bound from the noise', () => {
    const o = judged(DAMPING_ONLY, scopeRecordText({ zeta: 1.2, naturalHz: 1e6 }, 20e3));
    expect(o.verdict).toBe('pass');
    expect(value(o, 'dampingRatio').value!).toBeGreaterThan(0.3);
    expect(value(o, 'dampingRatio').value!).toBeLessThan(1.2);
  });

  // A lightly damped leakage resonance (ζ = 0.05 at 200 kHz) overshoots exp(−0.05π/√(1−0.0025)) = 85 %
  // of the step (Ogata) when a fast edge excites it. A 48 kHz interface's square holds nothing above
  // 24 kHz: the resonance is hardly excited and the record shows the square's own band-limit
  // overshoot, about 9 % (the Gibbs phenomenon), which a 15 % limit would pass.
  const OVERSHOOT_ONLY: RingingStep = { ...RINGING_STEP, squareHz: 1000, limits: { overshootPercent: { high: 15, unit: '%' } } };
  const LEAKY = { zeta: 0.05, naturalHz: 200e3 };
  it('refuses a record driven by an edge too slow to excite the ringing (a 48 kHz interface’s square), naming the file', () => {
    const slow = judgeScopeRecord(OVERSHOOT_ONLY, drivenRecordText(LEAKY, 1000, 24e3), 'interface.csv');
    expect(slow.ok).toBe(false);
    // 0.35/t_r of a square band-limited at 24 kHz lies near 24 kHz (rise time and bandwidth, common practice).
    expect(!slow.ok && slow.refusal).toMatch(/^interface\.csv: .*too slow to excite ringing above [12]\d\.\d kHz.*generator with a fast edge \(rise time under 3\.50 µs\)/);
    // The same unit driven by fast edges is judged, and fails on its overshoot.
    const fast = judged(OVERSHOOT_ONLY, drivenRecordText(LEAKY, 1000, null));
    expect(fast.verdict).toBe('fail');
    expect(Math.abs(value(fast, 'overshootPercent').value! - 100 * textbookOvershoot(LEAKY.zeta))).toBeLessThan(2);
  });

  it('with a ring-frequency low limit the edge must reach twice it: a 150 kHz limit wants a rise time under 1.17 µs', () => {
    // ζ = 1 at 200 kHz rises 10–90 % in 3.36/ωn = 2.7 µs (Ogata's step response, on the formula):
    // about 130 kHz, enough alone (100 kHz) but not for 2 × 150 kHz.
    const damped = { zeta: 1, naturalHz: 200e3 };
    expect(judgeScopeRecord({ ...OVERSHOOT_ONLY, squareHz: 20e3 }, drivenRecordText(damped, 20e3, null), 'd.csv').ok).toBe(true);
    const refused = judgeScopeRecord({ ...OVERSHOOT_ONLY, squareHz: 20e3, limits: { ringFrequencyHz: { low: 150e3, unit: 'Hz' } } }, drivenRecordText(damped, 20e3, null), 'd.csv');
    expect(!refused.ok && refused.refusal).toMatch(/needs 300 kHz at least.*rise time under 1\.17 µs/);
  });

  it('cuts a long file name, channel name and unit to what a stored record keeps', () => {
    const text = scopeRecordText({ zeta: 0.45, naturalHz: 300e3 }, 20e3).replace('TIME,CH1', `TIME,CH1 ${'x'.repeat(250)} (${'V'.repeat(60)})`);
    const o = judgeScopeRecord(RINGING_STEP, text, `${'n'.repeat(300)}.csv`);
    if (!o.ok) throw new Error(o.refusal);
    expect(o.record.fileName.length).toBe(SCOPE_TEXT_MAX.fileName);
    expect(o.record.channelName.length).toBe(SCOPE_TEXT_MAX.channelName);
    expect(o.record.channelName.startsWith('CH1 xxx')).toBe(true);
    expect(o.record.plot.unit.length).toBe(SCOPE_TEXT_MAX.unit);
  });

  it(`refuses a record of another square wave (10 kHz for 20 kHz; more than ${RECORD_FREQUENCY_TOLERANCE_PERCENT} % off)`, () => {
    const outcome = judgeScopeRecord(RINGING_STEP, scopeRecordText({ zeta: 0.5, naturalHz: 300e3 }, 10e3), 'other.csv');
    expect(outcome).toMatchObject({ ok: false });
    expect(!outcome.ok && outcome.refusal).toMatch(/other\.csv records a square wave of 10(\.00)? kHz, not the step's 20 kHz/);
  });

  it('refuses a file that is not a scope record, naming the file and the line', () => {
    const outcome = judgeScopeRecord(RINGING_STEP, 'Hello,world\nthis,is\nnot,data\n', 'notes.csv');
    expect(outcome.ok).toBe(false);
    expect(!outcome.ok && outcome.refusal).toMatch(/^notes\.csv cannot be read: no row of numbers/);
  });

  it('refuses a channel the record does not have (columns counted from 0)', () => {
    const outcome = judgeScopeRecord({ ...RINGING_STEP, channel: 1 }, scopeRecordText({ zeta: 0.5, naturalHz: 300e3 }, 20e3), 'one.csv');
    expect(!outcome.ok && outcome.refusal).toMatch(/one\.csv has 1 voltage column \(“CH1”\).*reads column 1/);
  });

  it('refuses an undersampled record (fewer than 8 samples a ringing period) rather than judge it', () => {
    const outcome = judgeScopeRecord(RINGING_STEP, scopeRecordText({ zeta: 0.3, naturalHz: 300e3 }, 20e3, 6), 'slow.csv');
    expect(!outcome.ok && outcome.refusal).toMatch(/slow\.csv: the record cannot be judged: .*higher sample rate/);
  });

  it('edge spacing gives the square’s frequency: half a period between edges', () => {
    expect(squareHzOfEdges([{ timeS: 0 }, { timeS: 25e-6 }, { timeS: 50e-6 }])).toBeCloseTo(20e3, 6);
    // One edge the analysis dropped doubles one spacing; the median holds.
    expect(squareHzOfEdges([{ timeS: 0 }, { timeS: 25e-6 }, { timeS: 75e-6 }, { timeS: 100e-6 }])).toBeCloseTo(20e3, 6);
  });

  it('plays the step’s square wave, and a dBu level only where the station is calibrated', () => {
    expect(ringingStimulus(RINGING_STEP, null)).toEqual({ ok: true, stimulus: { on: true, frequencyHz: 20e3, levelDbfs: -10, waveform: 'square' } });
    const dbu = { ...RINGING_STEP, level: { value: 4, unit: 'dBu' as const } };
    expect(ringingStimulus(dbu, null).ok).toBe(false);
    expect(ringingStimulus(dbu, { outputDbuAtFullScale: 18, inputDbuAtFullScale: 18 })).toMatchObject({ ok: true, stimulus: { levelDbfs: -14 } });
    // +18 dBu at full scale: a square's top reaches +15.9 dBu at most (its ceiling, 20·log10(π/4)).
    expect(ringingStimulus({ ...dbu, level: { value: 17, unit: 'dBu' } }, { outputDbuAtFullScale: 18, inputDbuAtFullScale: 18 }).ok).toBe(false);
  });

  it('the procedure file takes the step, and refuses a level above the square’s ceiling or no limit at all', () => {
    const demo = JSON.parse(readFileSync(fileURLToPath(new URL('../../resources/procedures/mg20-lf-trim.json', import.meta.url)), 'utf8'));
    const file = (step: object) => JSON.stringify({ ...demo, steps: [demo.steps[0], step, demo.steps[1]] });
    expect(checkProcedureFile(file(RINGING_STEP)).ok).toBe(true);
    const loud = checkProcedureFile(file({ ...RINGING_STEP, level: { value: -1, unit: 'dBFS' } }));
    expect(!loud.ok && loud.problems).toEqual([{ path: 'steps[1].level.value', message: `a square wave's level must be at most ${SQUARE_MAX_LEVEL_DBFS.toFixed(1)} dBFS (its edges' overshoot reaches full scale there)` }]);
    const none = checkProcedureFile(file({ ...RINGING_STEP, limits: {} }));
    expect(!none.ok && none.problems[0].message).toMatch(/needs at least one of ringFrequencyHz/);
  });
});
