// Issue 11, `max-level`: the generator rises from a start level in steps, never above the ceiling,
// until THD+N reaches the threshold; the unit's output level where it did, interpolated between
// the readings either side, is judged against the limit. A ceiling reached without crossing gives
// a lower bound; a clipped input stops the run and never passes.
//
// Expected values come from outside the code:
// - the distortion of a memoryless cubic stage y = x − a·x³ by its Fourier series
//   (sin³θ = (3 sin θ − sin 3θ)/4, textbook; tests/support/max-level.ts), so where its THD+N
//   crosses the threshold is known in closed form;
// - levels by the dBu definition (0 dBu = √0.6 V = 0.7746 V RMS) and AES17's full-scale sine
//   (0 dBFS): a station whose output gives +18 dBu at full scale plays +4 dBu at −14 dBFS;
// - a power law THD ∝ V^k is a straight line in dB against dB (logarithms; textbook), so the
//   interpolation in dB of THD+N against output dBu is exact on it.

import { readFileSync } from 'node:fs';
import { fileURLToPath } from 'node:url';
import { describe, expect, it } from 'vitest';
import { crossingDbu, judgeMaxLevel, maxLevelNext, maxLevelPlan, type MaxLevelPoint, type MaxLevelStep } from '../../shared/procedures/max-level.ts';
import type { StationLevels } from '../../shared/procedures/check-steps.ts';
import { checkProcedureFile } from '../../shared/procedures/procedure-file.ts';
import { cubicCrossingDbu, cubicReading, MAX_LEVEL_STEP, maxLevelProcedureText } from '../support/max-level.ts';

const OUT_FS = 18;
const IN_FS = 18;
const LEVELS: StationLevels = { outputDbuAtFullScale: OUT_FS, inputDbuAtFullScale: IN_FS };
/** a = 0.108: the cubic stage's THD reaches 1 % near 0.6 of full scale (−4.4 dBFS), inside the range below. */
const A = 0.108;

const step = (overrides: Partial<MaxLevelStep> = {}): MaxLevelStep => ({ ...MAX_LEVEL_STEP, ...overrides });

/** The sequence as a page runs it: each planned level in turn, its reading, until the rules end it. */
function runSequence(s: MaxLevelStep, readingAt: (generatorDbfs: number, index: number) => MaxLevelPoint['reading']): { points: MaxLevelPoint[]; end: ReturnType<typeof maxLevelNext> } {
  const planned = maxLevelPlan(s, LEVELS);
  if (!planned.ok) throw new Error(planned.refusal);
  const points: MaxLevelPoint[] = [];
  for (let i = 0; i < planned.plan.levelsDbfs.length; i++) {
    const levelDbfs = planned.plan.levelsDbfs[i];
    points.push({ stimulus: { on: true, frequencyHz: s.frequencyHz, levelDbfs }, reading: { ...readingAt(levelDbfs, i), sequence: i + 1 } });
    const end = maxLevelNext(s, planned.plan, LEVELS, points);
    if (end.next !== 'go-on') return { points, end };
  }
  throw new Error('the sequence never ended');
}
const cubic = (a: number) => (dbfs: number) => cubicReading(a, dbfs, { outFs: OUT_FS, inFs: IN_FS });

describe('the level sequence', () => {
  it('starts at the start level and rises by stepDb, never above the ceiling (docs/procedures.md)', () => {
    // +4 dBu to +17.5 dBu in 1.5 dB steps: +4, +5.5, … +16 (the next, +17.5, is the ceiling itself).
    const planned = maxLevelPlan(step({ stepDb: 1.5, ceiling: { value: 17.5, unit: 'dBu' } }), LEVELS);
    expect(planned.ok).toBe(true);
    if (!planned.ok) return;
    expect(planned.plan.levelsDbu).toHaveLength(10);
    planned.plan.levelsDbu.forEach((dbu, k) => expect(dbu).toBeCloseTo(4 + 1.5 * k, 9));
    // dBFS = dBu − the output's dBu at full scale (+18): +4 dBu is −14 dBFS.
    expect(planned.plan.levelsDbfs[0]).toBeCloseTo(-14, 9);
    expect(Math.max(...planned.plan.levelsDbu)).toBeLessThanOrEqual(17.5);
    // A ceiling off the grid: the last level is the highest step below it.
    const off = maxLevelPlan(step({ stepDb: 1, ceiling: { value: 17.5, unit: 'dBu' } }), LEVELS);
    expect(off.ok && off.plan.levelsDbu.at(-1)).toBeCloseTo(17, 9);
  });

  it('is refused without a calibration, or with a ceiling above what the output reaches at full scale', () => {
    const none = maxLevelPlan(step(), null);
    expect(none.ok).toBe(false);
    const tooHigh = maxLevelPlan(step({ ceiling: { value: 20, unit: 'dBu' } }), LEVELS);
    expect(!tooHigh.ok && tooHigh.refusal).toMatch(/above the \+?18\.0 dBu this station's output reaches at full scale/);
    // In dBFS, the step still reports dBu: the output must be calibrated.
    const dbfs = maxLevelPlan(step({ startLevel: { value: -20, unit: 'dBFS' }, ceiling: { value: 0, unit: 'dBFS' } }), null);
    expect(!dbfs.ok && dbfs.refusal).toMatch(/no calibration that holds/);
  });
});

describe('the crossing', () => {
  it('on a cubic stage lies where its THD+N reaches 1 % by the Fourier series, within 0.05 dB', () => {
    const s = step();
    const { points, end } = runSequence(s, cubic(A));
    expect(end.next).toBe('crossed');
    const judged = judgeMaxLevel(s, LEVELS, points);
    expect(judged.ok).toBe(true);
    if (!judged.ok) return;
    const m = judged.result.measurements[0];
    expect(m.quantity).toBe('maxLevelDbu');
    expect(m.value!).toBeCloseTo(cubicCrossingDbu(A, 1, OUT_FS), 1);
    expect(Math.abs(m.value! - cubicCrossingDbu(A, 1, OUT_FS))).toBeLessThan(0.05);
    // +13.5 dBu or so is above the +12 dBu low limit.
    expect(judged.result.verdict).toBe('pass');
    expect(m.note).toMatch(/interpolated in dB of THD\+N/);
  });

  it('fails when the crossing is below the limit (a harder cubic crosses 6 dB lower)', () => {
    // Four times a: THD ∝ aA², so the same THD at half the drive, 6 dB down (Fourier series above).
    const s = step({ limits: { maxLevelDbu: { low: 12, unit: 'dBu' } } });
    const judged = judgeMaxLevel(s, LEVELS, runSequence(s, cubic(4 * A)).points);
    expect(judged.ok && judged.result.verdict).toBe('fail');
    if (!judged.ok) return;
    expect(judged.result.measurements[0].value!).toBeCloseTo(cubicCrossingDbu(4 * A, 1, OUT_FS), 1);
    expect(judged.result.reasons[0]).toMatch(/below the low limit of \+?12\.0 dBu/);
  });

  it('interpolates in dB of THD+N against output dBu: exact on a power law', () => {
    // THD+N = 1 % · 10^(k·(V − 15)/20): a straight line in dB, crossing 1 % at +15 dBu exactly.
    const k = 3;
    const at = (dbu: number) => ({ outputDbu: dbu, thdnPercent: 10 ** ((k * (dbu - 15)) / 20) });
    expect(crossingDbu(at(14.2), at(16.1), 1)).toBeCloseTo(15, 9);
    // Output that did not rise (a stage against its rails): the lower one, never more.
    expect(crossingDbu({ outputDbu: 16, thdnPercent: 0.5 }, { outputDbu: 15.9, thdnPercent: 3 }, 1)).toBe(15.9);
  });
});

describe('how the sequence ends', () => {
  it('reaching the ceiling without crossing gives a lower bound: a pass when it meets the low limit, a fail when not', () => {
    // A gentle stage: a = 0.01 stays under 1 % THD at full scale (aA²/4 = 0.25 %).
    const s = step();
    const { points, end } = runSequence(s, cubic(0.01));
    expect(end.next).toBe('stop');
    expect(end.next === 'stop' && end.why).toBe('ceiling');
    const judged = judgeMaxLevel(s, LEVELS, points);
    expect(judged.ok).toBe(true);
    if (!judged.ok) return;
    const m = judged.result.measurements[0];
    // The highest output read: the generator's +18 dBu through the gentle stage (fundamental 1 − 3a/4).
    expect(m.value!).toBeCloseTo(18 + 20 * Math.log10(1 - 0.0075), 6);
    expect(m.note).toMatch(/lower bound/);
    expect(judged.result.verdict).toBe('pass');
    // The same bound under a +20 dBu limit is not earned.
    const strict = step({ limits: { maxLevelDbu: { low: 20, unit: 'dBu' } } });
    const failed = judgeMaxLevel(strict, LEVELS, runSequence(strict, cubic(0.01)).points);
    expect(failed.ok && failed.result.verdict).toBe('fail');
  });

  it('stops at once when the input clips, and records a FAIL with the reason, never a pass', () => {
    const s = step({ limits: { maxLevelDbu: { low: -10, unit: 'dBu' } } });
    // The gentle stage, but the input clips from the 5th level on (e.g. an input with less headroom).
    const { points, end } = runSequence(s, (dbfs, i) => cubicReading(0.01, dbfs, { outFs: OUT_FS, inFs: IN_FS }, 1000, i >= 4 ? { flags: ['clipping'] } : {}));
    expect(points).toHaveLength(5);
    expect(end.next === 'stop' && end.why).toBe('clipped');
    const judged = judgeMaxLevel(s, LEVELS, points);
    expect(judged.ok).toBe(true);
    if (!judged.ok) return;
    expect(judged.result.verdict).toBe('fail');
    expect(judged.result.measurements[0].value).toBeNull();
    expect(judged.result.reasons.join(' ')).toMatch(/input clipped at the generator's \+8\.0 dBu/);
    // Clipping ends the run even before the reading settles: the level only rises from there.
    const unsettled = { ...points[4], reading: { ...points[4].reading, settled: false, settleProgress: 0.5, settleRemainingS: 1 } };
    expect(judgeMaxLevel(s, LEVELS, [...points.slice(0, 4), unsettled]).ok).toBe(true);
  });

  it('THD+N past the threshold at the first level measures nothing: a FAIL saying to start lower', () => {
    const s = step({ startLevel: { value: 16, unit: 'dBu' } });
    const { points, end } = runSequence(s, cubic(4 * A));
    expect(points).toHaveLength(1);
    expect(end.next).toBe('crossed');
    const judged = judgeMaxLevel(s, LEVELS, points);
    expect(judged.ok && judged.result.verdict).toBe('fail');
    expect(judged.ok && judged.result.measurements[0].value).toBeNull();
    expect(judged.ok && judged.result.reasons[0]).toMatch(/Start the step lower/);
  });
});

describe('what main refuses (nothing is judged from it)', () => {
  const s = step();
  const { points } = runSequence(s, cubic(A));

  it('a reading not of its level: another level, another frequency, no signal, not settled', () => {
    const swapped = points.map((p, i) => (i === 2 ? { ...p, stimulus: { ...p.stimulus, levelDbfs: p.stimulus.levelDbfs + 1 } } : p));
    expect(judgeMaxLevel(s, LEVELS, swapped)).toMatchObject({ ok: false, refusal: expect.stringMatching(/^Reading 3 of the sequence: Level 3 of 15 \(\+6\.0 dBu\): The generator is at -11\.0 dBFS, not the procedure's -12\.0 dBFS/) });
    const wrongTone = points.map((p, i) => (i === 1 ? { ...p, reading: { ...p.reading, measuredFundamentalHz: 1100 } } : p));
    expect(judgeMaxLevel(s, LEVELS, wrongTone)).toMatchObject({ ok: false, refusal: expect.stringMatching(/Reading 2 .*not the generator's/) });
    const silent = points.map((p, i) => (i === 0 ? { ...p, reading: { ...p.reading, flags: ['no-signal' as const] } } : p));
    expect(judgeMaxLevel(s, LEVELS, silent)).toMatchObject({ ok: false, refusal: expect.stringMatching(/No signal/) });
    const unsettled = points.map((p, i) => (i === 3 ? { ...p, reading: { ...p.reading, settled: false, settleProgress: 0.4, settleRemainingS: 2 } } : p));
    expect(judgeMaxLevel(s, LEVELS, unsettled)).toMatchObject({ ok: false, refusal: expect.stringMatching(/not settled/) });
    // A level 30 dB down from the one played is not the unit's answer (a wrong input, a pad left in).
    const quiet = points.map((p, i) => (i === 0 ? { ...p, reading: cubicReading(A, p.stimulus.levelDbfs - 30, { outFs: OUT_FS, inFs: IN_FS }) } : p));
    expect(judgeMaxLevel(s, LEVELS, quiet)).toMatchObject({ ok: false, refusal: expect.stringMatching(/Reading 1 .*below/) });
  });

  it('a sequence that is not one: cut short, run on past its end, out of order, above the ceiling, or empty', () => {
    expect(judgeMaxLevel(s, LEVELS, points.slice(0, -1))).toMatchObject({ ok: false, refusal: expect.stringMatching(/below the ceiling, with THD\+N still under 1 %/) });
    const extra = { stimulus: { ...points.at(-1)!.stimulus, levelDbfs: points.at(-1)!.stimulus.levelDbfs + 1 }, reading: cubic(A)(points.at(-1)!.stimulus.levelDbfs + 1) };
    expect(judgeMaxLevel(s, LEVELS, [...points, extra])).toMatchObject({ ok: false, refusal: expect.stringMatching(/ended at reading \d+ \(THD\+N reached the threshold\)/) });
    const reversed = [points[1], points[0], ...points.slice(2)];
    expect(judgeMaxLevel(s, LEVELS, reversed).ok).toBe(false);
    expect(judgeMaxLevel(s, LEVELS, [])).toMatchObject({ ok: false });
    // One reading sent for two levels (1 dB apart, inside every level window): level 3 was never read.
    const reused = points.map((p, i) => (i === 2 ? { ...p, reading: points[1].reading } : p));
    expect(judgeMaxLevel(s, LEVELS, reused)).toMatchObject({ ok: false, refusal: expect.stringMatching(/^Reading 3 of the sequence is not a newer reading than reading 2/) });
    // Sixteen levels where the plan has fifteen (+4 to +18 dBu): the sixteenth would be above the ceiling.
    const gentle = runSequence(s, cubic(0.01)).points;
    const beyond = { stimulus: { on: true, frequencyHz: 1000, levelDbfs: 1 }, reading: cubic(0.01)(0) };
    expect(judgeMaxLevel(s, LEVELS, [...gentle, beyond])).toMatchObject({ ok: false, refusal: expect.stringMatching(/at most 15 levels/) });
  });
});

describe('the max-level step in a procedure file', () => {
  const file = (stepJson: object, requiresCalibration = true) => maxLevelProcedureText({ ...step(), ...stepJson }, 'A', requiresCalibration);
  const paths = (text: string) => {
    const checked = checkProcedureFile(text);
    return checked.ok ? [] : checked.problems.map((p) => p.path);
  };

  it('has its section in docs/procedures.md, with the cautions for a loud test', () => {
    const doc = readFileSync(fileURLToPath(new URL('../../docs/procedures.md', import.meta.url)), 'utf8');
    const section = doc.split(/^### /m).find((s) => s.startsWith('`max-level`'))!;
    expect(section).toBeDefined();
    expect(section).toMatch(/hearing protection/);
    expect(section).toMatch(/Esc/);
    expect(section).toMatch(/lower bound/);
  });

  it('is valid as documented, and needs a calibrated station', () => {
    expect(checkProcedureFile(file({})).ok).toBe(true);
    expect(paths(file({}, false))).toEqual(['requiresCalibration']);
  });

  it('refuses a ceiling not above the start, in another unit, a step out of range, too many levels, or a high limit', () => {
    expect(paths(file({ ceiling: { value: 4, unit: 'dBu' } }))).toEqual(['steps[1].ceiling.value']);
    expect(paths(file({ ceiling: { value: -2, unit: 'dBFS' } }))).toEqual(['steps[1].ceiling.unit']);
    expect(paths(file({ stepDb: 0.1 }))).toEqual(['steps[1].stepDb']);
    expect(paths(file({ stepDb: 8 }))).toEqual(['steps[1].stepDb']);
    expect(paths(file({ thdnThresholdPercent: 40 }))).toEqual(['steps[1].thdnThresholdPercent']);
    // −60 to +28 dBu in 0.25 dB steps: 353 levels.
    expect(paths(file({ startLevel: { value: -60, unit: 'dBu' }, ceiling: { value: 28, unit: 'dBu' }, stepDb: 0.25 }))).toEqual(['steps[1].stepDb']);
    expect(paths(file({ limits: { maxLevelDbu: { low: 12, high: 24, unit: 'dBu' } } }))).toEqual(['steps[1].limits.maxLevelDbu']);
  });
});
