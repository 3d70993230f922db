// Is the reading the unit's answer to the tone actually playing? A reading of another source (a
// wrong input channel, an unplugged or unpowered unit, a stimulus that moved) can be perfectly
// settled and clean, so settling alone never makes a reading recordable. Called by the live readout
// (nothing recordable unless ok), by main before it writes a trim point, and by the verdict.

import type { StimulusSetting } from '../dsp/sine-source.ts';
import type { Reading } from '../measurement/reading.ts';
import type { Procedure } from '../procedures/procedure.ts';
import { whyReadingInconsistent } from './reading-check.ts';

// Kept here, not beside the procedure schema: the page uses them and must not pull zod in.
/**
 * How far (percent of the procedure's stimulus frequency) a planned coherent test frequency may
 * move from it. The harmonics then stay within the same few percent of where the procedure put
 * them, which a trim at a sub-audio-adjacent frequency tolerates; further than that it is no longer
 * the procedure's measurement (a 14 Hz step run at 15.5 Hz is 10 % off). Main refuses a trim point
 * whose stimulus is further than this; the planner keeps within it.
 */
export const PLANNED_FREQUENCY_TOLERANCE_PERCENT = 3;

/** Tolerance for "the generator is at the procedure's level": typed or planned levels are exact. */
export const STIMULUS_LEVEL_TOLERANCE_DB = 0.01;

export type { StimulusSetting };

export type StimulusProblem = 'generator-off' | 'not-sine' | 'no-signal' | 'wrong-frequency' | 'level-low' | 'level-high' | 'clipping';

export type StimulusCheck = { ok: true } | { ok: false; problem: StimulusProblem; message: string };

type TrimStep = Pick<
  Procedure['trim'],
  'stimulusHz' | 'stimulusLevelDbfs' | 'expectedLevelDbfs' | 'frequencyTolerancePercent'
>;

const hz = (value: number) => `${value.toFixed(value < 100 ? 2 : 1)} Hz`;
const dbfs = (value: number) => `${value.toFixed(1)} dBFS`;

/**
 * The reading against the generator's setting and the window the procedure expects. The window is
 * stated for the procedure's stimulus level and moves with the generator's level (the stage is
 * linear at the fundamental); whether the generator is at the procedure's level is
 * checkStimulusSetting's question.
 */
export function checkStimulus(reading: Reading, stimulus: StimulusSetting, trim: TrimStep): StimulusCheck {
  if (!stimulus.on) {
    return { ok: false, problem: 'generator-off', message: 'The generator is off: turn it on to measure the unit.' };
  }
  const notSine = whyNotSine(stimulus);
  if (notSine) return { ok: false, problem: 'not-sine', message: notSine };
  if (reading.flags.includes('no-signal')) {
    return {
      ok: false,
      problem: 'no-signal',
      message: 'No signal at the input: the unit is not connected, not powered, or the capture is on the wrong channel.',
    };
  }
  if (reading.flags.includes('clipping')) {
    return {
      ok: false,
      problem: 'clipping',
      message: 'The input is clipping: lower the level into the interface (or the unit is oscillating: turn the trimmer back toward the safe end).',
    };
  }
  // The frequency found in the signal, not the one the tones were read at: on a shared clock the
  // latter is the generator's own setting, and would pass any tone.
  const measuredHz = reading.measuredFundamentalHz;
  const offPercent = (100 * Math.abs(measuredHz - stimulus.frequencyHz)) / stimulus.frequencyHz;
  if (!(offPercent <= trim.frequencyTolerancePercent)) {
    return {
      ok: false,
      problem: 'wrong-frequency',
      message:
        `The captured tone is at ${hz(measuredHz)}, not the generator's ${hz(stimulus.frequencyHz)}: it is not the unit's answer to the stimulus. ` +
        'Check the capture channel and that nothing else feeds it; if the unit is oscillating, turn the trimmer back toward the safe end.',
    };
  }
  if (trim.expectedLevelDbfs) {
    const shift = stimulus.levelDbfs - trim.stimulusLevelDbfs;
    const low = trim.expectedLevelDbfs.low + shift;
    const high = trim.expectedLevelDbfs.high + shift;
    const level = reading.fundamental.levelDbfs;
    if (level < low) {
      return {
        ok: false,
        problem: 'level-low',
        message:
          `The captured level ${dbfs(level)} is ${(low - level).toFixed(1)} dB below the ${dbfs(low)}–${dbfs(high)} expected: ` +
          'check the capture channel, that the unit is powered, and the interface input gain.',
      };
    }
    if (level > high) {
      return {
        ok: false,
        problem: 'level-high',
        message:
          `The captured level ${dbfs(level)} is ${(level - high).toFixed(1)} dB above the ${dbfs(low)}–${dbfs(high)} expected: ` +
          'check the interface input gain and the generator level.',
      };
    }
  }
  return { ok: true };
}

/**
 * Every reading of the meter is a sine measurement: a square's odd harmonics (a third at −9.5 dB)
 * would read as the unit's distortion, and its level is not a sine's. So a square is never the
 * stimulus of a trim point or a check step.
 */
function whyNotSine(stimulus: StimulusSetting): string | null {
  return stimulus.waveform === 'square'
    ? 'The generator plays a square wave: this measurement needs a sine. Set the generator to sine.'
    : null;
}

/**
 * The generator's setting against the procedure: on, at the procedure's level, and no further from
 * its frequency than a planned coherent frequency may be. Null when it is the procedure's stimulus.
 */
export function checkStimulusSetting(stimulus: StimulusSetting, trim: Pick<Procedure['trim'], 'stimulusHz' | 'stimulusLevelDbfs'>): string | null {
  if (!stimulus.on) return 'The generator is off: turn it on to measure the unit.';
  const notSine = whyNotSine(stimulus);
  if (notSine) return notSine;
  const offPercent = (100 * Math.abs(stimulus.frequencyHz - trim.stimulusHz)) / trim.stimulusHz;
  if (!(offPercent <= PLANNED_FREQUENCY_TOLERANCE_PERCENT)) {
    return (
      `The generator is at ${hz(stimulus.frequencyHz)}, ${offPercent.toFixed(1)} % from the procedure's ${hz(trim.stimulusHz)} ` +
      `(at most ${PLANNED_FREQUENCY_TOLERANCE_PERCENT} % is allowed): set it to the procedure's frequency.`
    );
  }
  if (!(Math.abs(stimulus.levelDbfs - trim.stimulusLevelDbfs) <= STIMULUS_LEVEL_TOLERANCE_DB)) {
    return `The generator is at ${dbfs(stimulus.levelDbfs)}, not the procedure's ${dbfs(trim.stimulusLevelDbfs)}: set it to the procedure's level.`;
  }
  return null;
}

/**
 * Why this reading may not be recorded as a trim point now, or null when it may. An unsettled
 * reading needs the deliberate 'record-marked' action; nothing else can be overridden.
 */
export function whyNotRecordable(
  reading: Reading,
  stimulus: StimulusSetting,
  trim: TrimStep,
  unsettled: 'refuse' | 'record-marked',
): string | null {
  // First: a reading that contradicts itself says nothing reliable about the stimulus either.
  const inconsistent = whyReadingInconsistent(reading);
  if (inconsistent) return inconsistent;
  const setting = checkStimulusSetting(stimulus, trim);
  if (setting) return setting;
  const check = checkStimulus(reading, stimulus, trim);
  if (!check.ok) return check.message;
  if (!reading.settled && unsettled === 'refuse') {
    return 'The reading has not settled: wait for it, or record it marked as unsettled (it then stays out of the fit and the verdict unless you confirm it).';
  }
  return null;
}
