// The max-level check: the generator rises in steps at one frequency until the unit's THD+N reaches
// the step's threshold, and the unit's output level where it did so is its maximum level. The page
// walks the sequence with these rules and main re-runs them on every reading sent, in order, so the
// level found (and whether the sequence ended where it may) is decided here once.
//
// Only types come from procedure-file.ts: the page uses this module and must not pull zod in.

import type { StimulusSetting } from '../dsp/sine-source.ts';
import { compactNumber, percent } from '../format.ts';
import { signedFixed } from '../levels.ts';
import type { Reading } from '../measurement/reading.ts';
import { whyReadingInconsistent } from '../records/reading-check.ts';
import { checkStimulusSetting } from '../records/stimulus-check.ts';
import { checkResult, measurement, playedLevel, whyNotOfStimulus, whyStepCannotRun, type CheckOutcome, type StationLevels } from './check-steps.ts';
import type { CheckStep } from './procedure-file.ts';

export type MaxLevelStep = Extract<CheckStep, { kind: 'max-level' }>;

/** One level of the sequence: what the generator was set to, and the reading taken there. */
export interface MaxLevelPoint {
  stimulus: StimulusSetting;
  reading: Reading;
}

export interface MaxLevelPlan {
  /** The generator's levels in order, dBFS: start, start + stepDb, …, never above the ceiling. */
  levelsDbfs: number[];
  /** The same levels at the station's output terminals, dBu. */
  levelsDbu: number[];
}

const signed = (value: number) => signedFixed(value, 1);
/** The step's threshold as the file gives it. */
const threshold = (step: MaxLevelStep) => `${compactNumber(step.thdnThresholdPercent)} %`;

/**
 * The step's levels on this station. Each is start + k·stepDb computed afresh (not summed step by
 * step, which drifts), in the file's unit, then converted once, so the page and main get the same
 * numbers. Null with the reason when the station cannot run the step (no calibration, a ceiling
 * above its output's full scale).
 */
export function maxLevelPlan(step: MaxLevelStep, levels: StationLevels | null): { ok: true; plan: MaxLevelPlan } | { ok: false; refusal: string } {
  const cannot = whyStepCannotRun(step, levels);
  if (cannot) return { ok: false, refusal: cannot };
  const station = levels as StationLevels;
  const count = Math.floor((step.ceiling.value - step.startLevel.value) / step.stepDb + 1e-9) + 1;
  const levelsDbfs: number[] = [];
  const levelsDbu: number[] = [];
  for (let k = 0; k < count; k++) {
    const played = playedLevel(step.id, { value: step.startLevel.value + k * step.stepDb, unit: step.startLevel.unit }, station, 0);
    if (!played.ok) return { ok: false, refusal: played.refusal };
    levelsDbfs.push(played.levelDbfs);
    levelsDbu.push(played.levelDbfs + station.outputDbuAtFullScale);
  }
  return { ok: true, plan: { levelsDbfs, levelsDbu } };
}

/**
 * What follows a reading of the sequence (the last of `points`):
 * - go-on: THD+N is below the threshold and a higher level remains;
 * - crossed: THD+N has reached the threshold: the sequence ends, the crossing lies at or before it;
 * - stop: the station's input clipped (what the unit gives is then unknown, and the interface's own
 *   distortion takes over), or the ceiling was reached without crossing;
 * - refuse: the reading is not the unit's answer to that level (another level or frequency, no
 *   signal, not settled, a reading that contradicts itself): nothing may be judged from it.
 */
export type MaxLevelNext =
  | { next: 'go-on'; levelDbfs: number }
  | { next: 'crossed' }
  | { next: 'stop'; why: 'clipped' | 'ceiling'; message: string }
  | { next: 'refuse'; message: string };

export function maxLevelNext(step: MaxLevelStep, plan: MaxLevelPlan, levels: StationLevels, points: readonly MaxLevelPoint[]): MaxLevelNext {
  const index = points.length - 1;
  const point = points[index];
  if (!point) return { next: 'refuse', message: `Step “${step.id}” has no reading yet.` };
  const wantedDbfs = plan.levelsDbfs[index];
  if (wantedDbfs === undefined) return { next: 'refuse', message: `Step “${step.id}” plays at most ${plan.levelsDbfs.length} levels, up to its ceiling; reading ${index + 1} lies beyond it.` };
  const { reading, stimulus } = point;
  const inconsistent = whyReadingInconsistent(reading);
  if (inconsistent) return { next: 'refuse', message: inconsistent };
  // The level must be the sequence's own: a level above the plan's would have gone past the ceiling
  // or skipped a step where the crossing could lie.
  const setting = checkStimulusSetting(stimulus, { stimulusHz: step.frequencyHz, stimulusLevelDbfs: wantedDbfs });
  if (setting) return { next: 'refuse', message: `Level ${index + 1} of ${plan.levelsDbfs.length} (${signed(plan.levelsDbu[index] as number)} dBu): ${setting}` };
  // A clipped input ends the run at once, settled or not: the level only rises from here.
  if (reading.flags.includes('clipping')) {
    return {
      next: 'stop',
      why: 'clipped',
      message:
        `the station's input clipped at the generator's ${signed(plan.levelsDbu[index] as number)} dBu, before THD+N reached ${threshold(step)}: ` +
        `the unit's maximum level could not be measured on this input. Put a pad in front of the input (and calibrate with it), or lower the ceiling, then retest.`,
    };
  }
  const requested = { on: true as const, frequencyHz: step.frequencyHz, levelDbfs: wantedDbfs, levelDbu: plan.levelsDbu[index] as number };
  const why = whyNotOfStimulus(reading, stimulus, step, requested, levels.inputDbuAtFullScale);
  if (why) return { next: 'refuse', message: why };
  if (reading.thdnPercent >= step.thdnThresholdPercent) return { next: 'crossed' };
  const following = plan.levelsDbfs[index + 1];
  if (following === undefined) {
    return {
      next: 'stop',
      why: 'ceiling',
      message: `The ceiling (${signed(plan.levelsDbu[index] as number)} dBu from the generator) was reached with THD+N at ${percent(reading.thdnPercent)}, below ${threshold(step)}: the unit's maximum level is at least the output measured there.`,
    };
  }
  return { next: 'go-on', levelDbfs: following };
}

/** The unit's output level of a reading, dBu: the captured fundamental lifted by the input calibration. */
export const outputDbuOf = (reading: Pick<Reading, 'fundamental'>, levels: Pick<StationLevels, 'inputDbuAtFullScale'>): number => reading.fundamental.levelDbfs + levels.inputDbuAtFullScale;

/** THD+N in dB of a ratio given in percent. */
const thdnDb = (percentValue: number) => 20 * Math.log10(percentValue / 100);

/**
 * The output level where THD+N reaches `thresholdPercent`, between two readings that bracket it.
 * Interpolated linearly in dB of THD+N against output dBu: past the onset of clipping THD+N rises
 * roughly as a power of the output amplitude, which is a straight line on those axes, so a straight
 * line between neighbouring readings follows it more closely than one in percent would. When the
 * output did not rise between the two (a stage hard against its rails), the lower output is given:
 * the crossing lies no higher than where THD+N was already past the threshold.
 */
export function crossingDbu(below: { outputDbu: number; thdnPercent: number }, above: { outputDbu: number; thdnPercent: number }, thresholdPercent: number): number {
  if (!(above.outputDbu > below.outputDbu)) return Math.min(below.outputDbu, above.outputDbu);
  const d0 = thdnDb(below.thdnPercent);
  const d1 = thdnDb(above.thdnPercent);
  const target = thdnDb(thresholdPercent);
  if (!(d1 > d0)) return above.outputDbu;
  const t = Math.min(1, Math.max(0, (target - d0) / (d1 - d0)));
  return below.outputDbu + t * (above.outputDbu - below.outputDbu);
}

/**
 * The step's measurement from its whole sequence, as main judges it: every reading is checked in
 * order against the level the sequence plays there, the sequence must end where the rules above end
 * it (not earlier, not later), and the crossing is computed here from the readings themselves.
 * - crossed: maxLevelDbu is the interpolated crossing, judged against its limit;
 * - ceiling reached: the highest output measured, a lower bound (the unit reaches at least that
 *   with THD+N under the threshold), so a bound that meets the low limit is an earned pass;
 * - input clipped, or THD+N past the threshold at the first level: nothing was measured, a FAIL
 *   with the plain reason, never a pass.
 */
export function judgeMaxLevel(step: MaxLevelStep, levels: StationLevels | null, points: readonly MaxLevelPoint[]): CheckOutcome {
  const planned = maxLevelPlan(step, levels);
  if (!planned.ok) return { ok: false, refusal: planned.refusal };
  const station = levels as StationLevels;
  const { plan } = planned;
  if (points.length === 0) return { ok: false, refusal: `Step “${step.id}” came with no readings: run the sequence.` };
  if (points.length > plan.levelsDbfs.length) return { ok: false, refusal: `Step “${step.id}” plays at most ${plan.levelsDbfs.length} levels up to its ceiling, and ${points.length} readings came: nothing was recorded.` };
  let end: MaxLevelNext | null = null;
  for (let i = 0; i < points.length; i++) {
    const next = maxLevelNext(step, plan, station, points.slice(0, i + 1));
    if (next.next === 'refuse') return { ok: false, refusal: `Reading ${i + 1} of the sequence: ${next.message}` };
    // Each level has a reading of its own, taken after the last: one reading sent for two levels
    // would stand for a level that was never read.
    if (i > 0 && !(points[i].reading.sequence > points[i - 1].reading.sequence)) {
      return { ok: false, refusal: `Reading ${i + 1} of the sequence is not a newer reading than reading ${i}: every level needs its own settled reading. Run the sequence again.` };
    }
    const last = i === points.length - 1;
    if (!last && next.next !== 'go-on') {
      return { ok: false, refusal: `The sequence ended at reading ${i + 1} (${next.next === 'crossed' ? 'THD+N reached the threshold' : next.message}), and ${points.length - i - 1} more came after it: it is not the step's sequence.` };
    }
    if (last) end = next;
  }
  const ended = end as MaxLevelNext;
  if (ended.next === 'go-on') {
    return { ok: false, refusal: `The sequence stopped at ${signed(plan.levelsDbu[points.length - 1] as number)} dBu, below the ceiling, with THD+N still under ${threshold(step)}: nothing was measured. Run the step to its end.` };
  }
  const limit = step.limits.maxLevelDbu;
  const label = 'Maximum output level';
  const outputs = points.map((p) => ({ outputDbu: outputDbuOf(p.reading, station), thdnPercent: p.reading.thdnPercent }));
  const at = `${step.frequencyHz} Hz`;
  if (ended.next === 'stop' && ended.why === 'clipped') {
    return { ok: true, result: checkResult(step, [{ m: measurement('maxLevelDbu', null, limit, ended.message), label }]) };
  }
  if (ended.next === 'stop') {
    const highest = Math.max(...outputs.map((o) => o.outputDbu));
    const note = `a lower bound: the ceiling was reached with THD+N at ${percent(outputs.at(-1)!.thdnPercent)}, under the ${threshold(step)} threshold, so the unit reaches at least this at ${at}`;
    return { ok: true, result: checkResult(step, [{ m: measurement('maxLevelDbu', highest, limit, note), label: `${label} (lower bound)` }]) };
  }
  const above = outputs.at(-1)!;
  const below = outputs.at(-2);
  if (!below) {
    const note = `THD+N was already ${percent(above.thdnPercent)} at the first level (${signed(above.outputDbu)} dBu out), past the ${threshold(step)} threshold: the crossing lies below where the step starts, or the unit's noise alone is above the threshold there. Start the step lower, or check the unit's noise.`;
    return { ok: true, result: checkResult(step, [{ m: measurement('maxLevelDbu', null, limit, note), label }]) };
  }
  const value = crossingDbu(below, above, step.thdnThresholdPercent);
  const note = `THD+N reached ${threshold(step)} at ${at} between ${signed(below.outputDbu)} dBu (${percent(below.thdnPercent)}) and ${signed(above.outputDbu)} dBu out (${percent(above.thdnPercent)}); interpolated in dB of THD+N`;
  return { ok: true, result: checkResult(step, [{ m: measurement('maxLevelDbu', value, limit, note), label }]) };
}
