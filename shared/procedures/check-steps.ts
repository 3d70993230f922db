// The decision logic of a procedure's check steps (schema 2): what a step asks of the generator,
// whether a settled reading may be judged as the step's measurement, and the measurements with
// their limits and verdicts. Pure: the page, main and the headless demo line all call it, so a
// number is judged the same way wherever it is measured.
//
// Only types come from procedure-file.ts: the page uses this module and must not pull zod in.

import { DEFAULT_ANALYZER_OPTIONS, MAINS_MULTIPLES, RESOLVABLE_BINS } from '../measurement/frame-analyzer.ts';
import { checkChainFloorDbu } from '../calibration/chain-floor.ts';
import { FLOOR_DB, type HumSearch, type Reading } from '../measurement/reading.ts';
import type { StimulusSetting } from '../dsp/sine-source.ts';
import { whyReadingInconsistent, thdDbFromHarmonics } from '../records/reading-check.ts';
import { whyNotRecordable } from '../records/stimulus-check.ts';
import type { Verdict } from '../records/verdict.ts';
import type { CheckStep, Limit, ProcedureStep } from './procedure-file.ts';
import { isUnsignedUnit, quantityDecimals, valueText } from './step-text.ts';
import { inputDbuAtFullScaleFor, type AudioSetup, type CalibrationUsed } from '../calibration/station-calibration.ts';

// One verdict type for the trim and the checks, so a step result is judged alike wherever it comes from.
export type { Verdict };

/**
 * The station's level calibration as a run uses it: the dBu of a full-scale sine at the generator's
 * output and at the capture input. Null when the station has no calibration that holds now (the
 * caller decides that with calibrationStatus).
 */
export interface StationLevels {
  outputDbuAtFullScale: number;
  inputDbuAtFullScale: number;
  /** The input that reads a two-channel unit's channel 2, when the calibration measured it and the setup still uses it. */
  secondInputDbuAtFullScale?: number | null;
}

/**
 * The levels a run's check steps are judged with: those of the calibration the run was started
 * under (never a newer one), channel 2's input figure only while the setup still reads it there.
 * Main judges with these; the page plans and previews with the same.
 */
export function runLevels(used: Pick<CalibrationUsed, 'inputDbuAtFullScale' | 'outputDbuAtFullScale' | 'secondInput'> | null, setup: Pick<AudioSetup, 'secondInputChannel'> | null): StationLevels | null {
  if (!used) return null;
  return { outputDbuAtFullScale: used.outputDbuAtFullScale, inputDbuAtFullScale: used.inputDbuAtFullScale, secondInputDbuAtFullScale: inputDbuAtFullScaleFor(2, used, setup) };
}

/**
 * One measured quantity of a step, with the limits as they were when it was judged (a snapshot: a
 * later revision of the procedure never changes a stored measurement). `quantity` is the limit's
 * key in the step ("thdDb", "harmonicsDbc.H3", "gainDb", …). `value` is null when the quantity
 * could not be measured; it then fails, because an unmeasured limit is not a met one.
 */
export interface Measurement {
  quantity: string;
  value: number | null;
  unit: string;
  low: number | null;
  high: number | null;
  verdict: Verdict;
  /** What a reader of the sheet must know about this value (a bound, a caveat), or null. */
  note: string | null;
}

export interface CheckResult {
  stepId: string;
  kind: CheckStep['kind'];
  verdict: Verdict;
  measurements: Measurement[];
  /** Why the step failed, one plain sentence each; empty on a pass. */
  reasons: string[];
}

/** The step's measurement, or why the reading(s) may not be judged as it (nothing is stored then). */
export type CheckOutcome = { ok: true; result: CheckResult } | { ok: false; refusal: string };

/**
 * How far the tone found in the signal may lie from the generator's frequency, percent: the demo
 * trim's own tolerance, which holds at 14 Hz, the lowest frequency a step may ask of the meter.
 */
export const CHECK_FREQUENCY_TOLERANCE_PERCENT = 1;

const round = (value: number, decimals = 1) => value.toFixed(decimals).replace('-', '−');
const hz = (value: number) => `${value.toFixed(value < 100 ? 2 : value < 1000 ? 1 : 0)} Hz`;

// ---- limits ----------------------------------------------------------------------------------

/**
 * A value against its limit. Limits are inclusive, as docs/procedures.md states: the value passes
 * when low ≤ value ≤ high, so a reading exactly at a bound passes. No value, no pass.
 */
export function judgeLimit(value: number | null, limit: Pick<Limit, 'low' | 'high'>): Verdict {
  if (value === null || !Number.isFinite(value)) return 'fail';
  if (limit.low !== undefined && !(value >= limit.low)) return 'fail';
  if (limit.high !== undefined && !(value <= limit.high)) return 'fail';
  return 'pass';
}

export function measurement(quantity: string, value: number | null, limit: Limit, note: string | null = null): Measurement {
  return { quantity, value, unit: limit.unit, low: limit.low ?? null, high: limit.high ?? null, verdict: judgeLimit(value, limit), note };
}

/** "−52.0 dBc is above the high limit of −55 dBc" and the like, for a step's reasons. */
function whyOutside(m: Measurement, label: string): string {
  if (m.value === null) return `${label} was not measured${m.note ? `: ${m.note}` : '.'}`;
  const text = (v: number) => (isUnsignedUnit(m.unit) ? valueText(v, m.unit, quantityDecimals(m.quantity)) : `${round(v)} ${m.unit}`);
  const value = text(m.value);
  if (m.high !== null && m.value > m.high) return `${label} ${value} is above the high limit of ${text(m.high)}.`;
  if (m.low !== null && m.value < m.low) return `${label} ${value} is below the low limit of ${text(m.low)}.`;
  return `${label} ${value} is outside its limits.`;
}

/** A step passes exactly when every measurement does; each failing one gives its reason. */
export function verdictOf(measured: readonly { m: Measurement; label: string }[]): { verdict: Verdict; reasons: string[] } {
  const reasons = measured.filter(({ m }) => m.verdict === 'fail').map(({ m, label }) => whyOutside(m, label));
  return { verdict: reasons.length === 0 && measured.length > 0 ? 'pass' : 'fail', reasons };
}

export function checkResult(step: CheckStep, measured: { m: Measurement; label: string }[]): CheckResult {
  return { stepId: step.id, kind: step.kind, ...verdictOf(measured), measurements: measured.map(({ m }) => m) };
}

// ---- the level of harmonic n -------------------------------------------------------------------

export type HarmonicLevelResult =
  | { measured: true; order: number; frequencyHz: number; levelDbc: number; note: string | null }
  | { measured: false; order: number; reason: 'above-nyquist' | 'not-measured'; message: string };

/**
 * The level of harmonic `order` in a reading, the one place that answers it. Policy when it is
 * missing: say why (it lies above Nyquist, or the meter did not count it) and give no number; a
 * caller never substitutes the floor or zero. A level the meter stored at its floor is returned as
 * it is (the meter's own "below anything measurable"), with a note saying so.
 */
export function harmonicLevel(reading: Pick<Reading, 'harmonics' | 'harmonicsAboveNyquist' | 'mainsCoincidentOrders' | 'sampleRateHz' | 'fundamental'>, order: number): HarmonicLevelResult {
  const harmonic = reading.harmonics.find((h) => h.order === order);
  if (harmonic) {
    const notes: string[] = [];
    if (harmonic.levelDbc <= FLOOR_DB) notes.push('at the analysis floor: below anything the meter can measure');
    if (reading.mainsCoincidentOrders.includes(order)) notes.push('lies on mains or one of its multiples, so its level may hold hum');
    return { measured: true, order, frequencyHz: harmonic.frequencyHz, levelDbc: harmonic.levelDbc, note: notes.length > 0 ? notes.join('; ') : null };
  }
  const nyquist = reading.sampleRateHz / 2;
  if (reading.harmonicsAboveNyquist.includes(order) || order * reading.fundamental.frequencyHz >= nyquist) {
    return {
      measured: false,
      order,
      reason: 'above-nyquist',
      message: `H${order} (${hz(order * reading.fundamental.frequencyHz)}) lies at or above Nyquist (${hz(nyquist)}) at ${reading.sampleRateHz} Hz sampling: it cannot be measured; use a higher sample rate`,
    };
  }
  return { measured: false, order, reason: 'not-measured', message: `H${order} was not measured by the meter (it counts fewer harmonics)` };
}

// ---- what a step asks of the generator --------------------------------------------------------

export type GeneratorRequest =
  | { on: false }
  | {
      on: true;
      /** The step's frequency; the planner may move it by a little (see plannedStimulus in run-plan.ts). */
      frequencyHz: number;
      levelDbfs: number;
      /** The level at the output terminals, when the station is calibrated. */
      levelDbu: number | null;
    };

export type GeneratorOutcome = { ok: true; request: GeneratorRequest } | { ok: false; refusal: string };

/** The check kinds that play a tone. */
export type StimulusStep = Exclude<CheckStep, { kind: 'noise' | 'hum' | 'response' }>;

/**
 * What the step asks of the generator: off for noise and hum; otherwise its frequency and its level
 * in dBFS, converted from dBu with the output calibration (dBFS = dBu − the output's dBu at full
 * scale). A dBu level on an uncalibrated station, or one the output cannot reach, is refused.
 */
export function generatorFor(step: CheckStep, levels: StationLevels | null): GeneratorOutcome {
  // A response step plays its sweep (shared/procedures/response.ts), not the tone generator.
  if (step.kind === 'noise' || step.kind === 'hum' || step.kind === 'response') return { ok: true, request: { on: false } };
  // A max-level step starts at its start level (shared/procedures/max-level.ts plans the rise).
  const played = playedLevel(step.id, step.kind === 'max-level' ? step.startLevel : step.level, levels, 0);
  if (!played.ok) return played;
  return { ok: true, request: { on: true, frequencyHz: step.frequencyHz, levelDbfs: played.levelDbfs, levelDbu: played.levelDbu } };
}

/**
 * A step's level as the generator plays it: dBFS as written, or dBu converted with the output
 * calibration (dBFS = dBu − the output's dBu at full scale). A dBu level on an uncalibrated station,
 * or one above `ceilingDbfs` (full scale for a sine, lower for a square), is refused.
 */
export function playedLevel(
  stepId: string,
  level: { value: number; unit: 'dBFS' | 'dBu' },
  levels: StationLevels | null,
  ceilingDbfs: number,
): { ok: true; levelDbfs: number; levelDbu: number | null } | { ok: false; refusal: string } {
  if (level.unit === 'dBFS') return { ok: true, levelDbfs: level.value, levelDbu: levels ? level.value + levels.outputDbuAtFullScale : null };
  if (!levels) {
    return {
      ok: false,
      refusal: `Step “${stepId}” plays ${round(level.value)} dBu, and this station has no calibration that holds: calibrate it in Station settings, then run the step.`,
    };
  }
  const levelDbfs = level.value - levels.outputDbuAtFullScale;
  if (levelDbfs > ceilingDbfs) {
    return {
      ok: false,
      refusal: `Step “${stepId}” plays ${round(level.value)} dBu, above the ${round(levels.outputDbuAtFullScale + ceilingDbfs)} dBu this station's output reaches${ceilingDbfs < 0 ? ' with this waveform' : ' at full scale'}: use an interface with more output level.`,
    };
  }
  return { ok: true, levelDbfs, levelDbu: level.value };
}

/** Why the step cannot be run on this station at all, or null when it can. */
export function whyStepCannotRun(step: CheckStep, levels: StationLevels | null): string | null {
  if (step.kind === 'response') {
    const level = playedLevel(step.id, step.level, levels, 0);
    return level.ok ? null : level.refusal;
  }
  const generator = generatorFor(step, levels);
  if (!generator.ok) return generator.refusal;
  if (step.kind === 'balance' || step.kind === 'crosstalk') return whyChannelsNotComparable(step, levels?.inputDbuAtFullScale ?? null, levels?.secondInputDbuAtFullScale ?? null);
  if (step.kind === 'max-level') {
    // Its ceiling is the loudest it plays: a station that cannot reach it cannot run the step.
    const ceiling = playedLevel(step.id, step.ceiling, levels, 0);
    if (!ceiling.ok) return ceiling.refusal;
    if (!levels) return `Step “${step.id}” reports the unit's maximum output level in dBu, and this station has no calibration that holds: calibrate it in Station settings.`;
  }
  if (levels) return null;
  // These report a level at the unit's terminals (or a gain between two of them): only a calibrated
  // input can say it.
  if (step.kind === 'gain') return `Step “${step.id}” measures gain from the calibrated output and input levels, and this station has no calibration that holds: calibrate it in Station settings.`;
  if (step.kind === 'noise' || step.kind === 'hum') return `Step “${step.id}” measures ${step.kind} in dBu, and this station has no calibration that holds: calibrate it in Station settings.`;
  return null;
}

/**
 * Why a step that compares two channels cannot be judged with these inputs, or null. Each channel
 * comes in on its own capture input, and an interface's inputs differ by as much as their gain
 * settings do (a knob a quarter-turn apart is several dB): a difference of the two dBFS readings
 * would judge the interface, not the unit. So both inputs need their own calibration (common
 * practice: each measurement channel is calibrated, or the cables swapped and the two results averaged).
 */
function whyChannelsNotComparable(step: Extract<CheckStep, { kind: 'balance' | 'crosstalk' }>, first: number | null, second: number | null): string | null {
  if (first !== null && second !== null) return null;
  const uncalibrated = [first === null ? step.channels[0] : null, second === null ? step.channels[1] : null].filter((c) => c !== null);
  return `Step “${step.id}” compares channels ${step.channels[0]} and ${step.channels[1]}, and the capture input of channel ${uncalibrated.join(' and ')} has no level calibration, so the two inputs' gains may differ: choose the input for the unit's channel 2 under Audio interface, calibrate the station with the loopback read on both inputs (Station settings), then start a retest of the unit (a run keeps the calibration it was started under).`;
}

// ---- may the reading be judged ---------------------------------------------------------------

/**
 * How far the driven channel's level may lie from the level played (dB, either way) before a
 * distortion, balance or crosstalk reading is refused as not the unit's answer. A line or output
 * stage under test is near unity gain or a few dB off it; a reading 20 dB away is a wrong capture
 * channel, a bypassed or dead unit, or a pad left in (common practice: a sanity window, not a limit;
 * a gain step judges the level itself). Wide enough for any stage a check procedure is written for
 * that has gain up to ±20 dB at the terminals; a unit with more gain is read on a padded input.
 */
export const CHECK_LEVEL_WINDOW_DB = 20;

/** Why a reading with the generator playing may not be judged as this step's, or null when it may. */
export function whyNotOfStimulus(reading: Reading, stimulus: StimulusSetting, step: StimulusStep, requested: GeneratorRequest & { on: true }, inputDbuAtFullScale: number | null): string | null {
  // The same rules as a trim point: a consistent, settled reading of the tone at the step's frequency
  // and level. The gain step judges the level by its limits; the others must read about what a
  // unity-gain stage gives: the level played, carried to the input's dBFS when both ends are calibrated.
  let expectedLevelDbfs: { low: number; high: number } | null = null;
  if (step.kind !== 'gain') {
    const centre = requested.levelDbu !== null && inputDbuAtFullScale !== null ? requested.levelDbu - inputDbuAtFullScale : requested.levelDbfs;
    expectedLevelDbfs = { low: centre - CHECK_LEVEL_WINDOW_DB, high: centre + CHECK_LEVEL_WINDOW_DB };
  }
  return whyNotRecordable(
    reading,
    stimulus,
    { stimulusHz: step.frequencyHz, stimulusLevelDbfs: requested.levelDbfs, expectedLevelDbfs, frequencyTolerancePercent: CHECK_FREQUENCY_TOLERANCE_PERCENT },
    'refuse',
  );
}

/**
 * The band a noise step's reading must have been summed over: the step's, its top capped at Nyquist
 * as the meter caps it. A noise figure over another band is another quantity (AES17 states noise
 * with its band), so it is never judged against this step's limit.
 */
export function noiseBandFor(step: Pick<Extract<CheckStep, { kind: 'noise' }>, 'band'>, sampleRateHz: number): { lowHz: number; highHz: number } {
  return { lowHz: step.band.lowHz, highHz: Math.min(step.band.highHz, sampleRateHz / 2) };
}

const band = (b: { lowHz: number; highHz: number }) => `${hz(b.lowHz)}–${hz(b.highHz)}`;

/** Why a reading with the generator off may not be judged as a noise or hum measurement. */
function whyNotQuiet(reading: Reading, stimulus: StimulusSetting, step: CheckStep): string | null {
  if (stimulus.on) return 'The generator is on: this step measures the unit with it off. Turn it off.';
  const inconsistent = whyReadingInconsistent(reading);
  if (inconsistent) return inconsistent;
  if (step.kind === 'noise') {
    const wanted = noiseBandFor(step, reading.sampleRateHz);
    // Half a hertz: the same band written twice, not a rounding of a different one.
    if (Math.abs(reading.bandHz.lowHz - wanted.lowHz) > 0.5 || Math.abs(reading.bandHz.highHz - wanted.highHz) > 0.5) {
      return `The reading's noise was summed over ${band(reading.bandHz)}, and this step measures it over ${band(wanted)}: set the meter to the step's band and wait for a new reading.`;
    }
  }
  if (reading.flags.includes('clipping')) return 'The input is clipping with the generator off: the unit is oscillating or something else feeds the input. Check the termination plug and the capture channel.';
  // Every real output, and every interface input, has noise: digital silence is an input nothing
  // reaches (a channel not delivered, a muted or unplugged input), and would pass any noise limit.
  if (reading.noiseDbfs <= FLOOR_DB) return 'The input reads digital silence: nothing from the unit reaches it. Check the capture channel chosen and the cable from the unit, then take a new reading.';
  if (!reading.settled) return 'The reading has not settled: wait for it.';
  // With the generator off the meter takes the strongest tone for its fundamental and leaves it and
  // its harmonics out of the noise (and out of the hum unless it is mains): a stray tone would pass.
  if (!reading.flags.includes('no-signal') && !isMainsTone(reading.fundamental.frequencyHz, reading.sampleRateHz / reading.frameSize)) {
    return `A tone at ${hz(reading.fundamental.frequencyHz)} is present with the generator off: the generator is still connected or on, or the unit oscillates. Check the termination plug and the unit, then take a new reading.`;
  }
  return null;
}

/** Nominal mains frequencies (IEC 60038): a quiet reading's strongest tone may be either's hum. */
const MAINS_HZ = [50, 60] as const;
/** How far mains may drift from nominal, Hz: the meter's own search span for it (grids hold ±0.2 Hz in normal operation; common practice). */
const MAINS_DRIFT_HZ = 0.5;

/**
 * Whether a tone lies on mains or one of its multiples (up to the 10th, as the meter checks), within
 * the meter's resolution (RESOLVABLE_BINS bins) plus the drift that multiple carries.
 */
function isMainsTone(frequencyHz: number, binHz: number): boolean {
  return MAINS_HZ.some((mains) => {
    const order = Math.round(frequencyHz / mains);
    return order >= 1 && order <= MAINS_MULTIPLES && Math.abs(frequencyHz - order * mains) <= RESOLVABLE_BINS * binHz + order * MAINS_DRIFT_HZ;
  });
}

// ---- the measurements ------------------------------------------------------------------------

/** A settled reading of one of the unit's channels, with that capture channel's input calibration. */
export interface ChannelReading {
  /** The unit's channel, numbered from 1 as in the step's `channels`. */
  channel: number;
  reading: Reading;
  /** dBu of a full-scale sine at this capture input; null when this input is not calibrated. */
  inputDbuAtFullScale: number | null;
}

export interface CheckInput {
  /** What the generator was set to while the reading(s) were taken. */
  stimulus: StimulusSetting;
  /** The station's calibration in use, or null. */
  levels: StationLevels | null;
  /** One settled reading for a one-channel step; for balance and crosstalk, one per channel of the step. */
  readings: ChannelReading[];
}

const dbuOf = (levelDbfs: number, dbuAtFullScale: number) => (levelDbfs <= FLOOR_DB ? FLOOR_DB : levelDbfs + dbuAtFullScale);

/** Power sum of levels in dB (uncorrelated tones add in power). */
const powerSumDb = (levelsDb: readonly number[]) => 10 * Math.log10(levelsDb.reduce((sum, l) => sum + 10 ** (l / 10), 0));

/** Judges a check step from its settled reading(s). Refuses readings that are not of the step's stimulus. */
export function measureCheckStep(step: CheckStep, input: CheckInput): CheckOutcome {
  if (step.kind === 'response') return { ok: false, refusal: `Step “${step.id}” measures a response from its sweep: it is recorded from the sweep's capture, not from readings.` };
  const generator = generatorFor(step, input.levels);
  if (!generator.ok) return { ok: false, refusal: generator.refusal };
  // Two-channel steps are judged on the figures given with each reading (checked below), not the plan's.
  const cannot = step.kind === 'balance' || step.kind === 'crosstalk' ? null : whyStepCannotRun(step, input.levels);
  if (cannot) return { ok: false, refusal: cannot };

  const channelsWanted = step.kind === 'balance' || step.kind === 'crosstalk' ? step.channels : [1];
  const readings = channelsWanted.map((channel) => input.readings.find((r) => r.channel === channel) ?? null);
  const missing = channelsWanted.filter((_, i) => readings[i] === null);
  if (missing.length > 0) return { ok: false, refusal: `Step “${step.id}” needs a reading of channel ${missing.join(' and ')}: take it before judging the step.` };
  const [first, second] = readings as ChannelReading[];
  if (step.kind === 'balance' || step.kind === 'crosstalk') {
    const incomparable = whyChannelsNotComparable(step, first.inputDbuAtFullScale, second.inputDbuAtFullScale);
    if (incomparable) return { ok: false, refusal: incomparable };
    // Two meters on two inputs never agree to the last digit (each has its own noise): the same
    // reading twice is one channel sent for both, which would make any balance 0 dB.
    if (JSON.stringify(first.reading) === JSON.stringify(second.reading)) {
      return { ok: false, refusal: `Step “${step.id}”: channels ${first.channel} and ${second.channel} came with the same reading, so one input was read for both. Check the inputs chosen for the unit's channels.` };
    }
  }

  const request = generator.request;
  if (!request.on) {
    const why = whyNotQuiet(first.reading, input.stimulus, step);
    if (why) return { ok: false, refusal: why };
    // whyStepCannotRun has made sure the station is calibrated.
    const levels = input.levels as StationLevels;
    if (step.kind === 'noise') {
      const implausible = whyBelowThermalNoise(first.reading, levels);
      if (implausible) return { ok: false, refusal: implausible };
      return { ok: true, result: measureNoise(step, first.reading, levels) };
    }
    if (step.kind === 'hum') return { ok: true, result: measureHum(step, first.reading, levels) };
    return { ok: false, refusal: `Step “${step.id}” (${step.kind}) cannot be measured with the generator off.` };
  }

  if (step.kind === 'noise' || step.kind === 'hum') return { ok: false, refusal: `Step “${step.id}” (${step.kind}) needs the generator off.` };
  const levelled: StimulusStep = step;
  // The driven channel's reading must be the unit's answer to the tone playing.
  const why = whyNotOfStimulus(first.reading, input.stimulus, levelled, request, first.inputDbuAtFullScale);
  if (why) return { ok: false, refusal: step.kind === 'balance' || step.kind === 'crosstalk' ? `Channel ${first.channel}: ${why}` : why };

  switch (step.kind) {
    case 'max-level':
      return { ok: false, refusal: `Step “${step.id}” is a max-level step: it is judged from its whole sequence of readings, never from one.` };
    case 'distortion': {
      const few = whyTooFewHarmonics(step, first.reading);
      if (few) return { ok: false, refusal: few };
      return { ok: true, result: measureDistortion(step, first.reading) };
    }
    case 'gain':
      return { ok: true, result: measureGain(step, first.reading, input.stimulus, input.levels as StationLevels) };
    case 'balance': {
      const whySecond = whyNotOfStimulus(second.reading, input.stimulus, levelled, request, second.inputDbuAtFullScale);
      if (whySecond) return { ok: false, refusal: `Channel ${second.channel}: ${whySecond}` };
      return twoChannel(step, first, second, 'balanceDb', step.limits.balanceDb, 'Balance', null);
    }
    case 'crosstalk': {
      // The undriven channel is quiet by design: only that it is a consistent, settled reading of
      // the tone's frequency (not of hum or another tone) and not clipping is asked of it.
      const other = second.reading;
      const inconsistent = whyReadingInconsistent(other);
      if (inconsistent) return { ok: false, refusal: `Channel ${second.channel}: ${inconsistent}` };
      if (!other.settled) return { ok: false, refusal: `Channel ${second.channel}: the reading has not settled: wait for it.` };
      if (other.flags.includes('clipping')) return { ok: false, refusal: `Channel ${second.channel}: the input is clipping: it is not the undriven channel, or it oscillates.` };
      // Digital silence is no unit's output (a unit, even a quiet one, has noise): nothing reaches
      // that input, so a crosstalk figure from it would pass a channel that was never connected.
      if (other.fundamental.levelDbfs <= FLOOR_DB || other.noiseDbfs <= FLOOR_DB) {
        return { ok: false, refusal: `Channel ${second.channel}: its input reads digital silence, so nothing from the unit reaches it. Check the input chosen for that channel and its cable.` };
      }
      const offPercent = (100 * Math.abs(other.fundamental.frequencyHz - input.stimulus.frequencyHz)) / input.stimulus.frequencyHz;
      if (!(offPercent <= CHECK_FREQUENCY_TOLERANCE_PERCENT)) {
        return { ok: false, refusal: `Channel ${second.channel}: its level was read at ${hz(other.fundamental.frequencyHz)}, not at the generator's ${hz(input.stimulus.frequencyHz)}: give the meter the generator's frequency.` };
      }
      const note = other.flags.includes('no-signal')
        ? 'the undriven channel reads below the meter’s signal threshold: the value holds its noise at that frequency too, so the crosstalk is at most this'
        : null;
      return twoChannel(step, first, second, 'crosstalkDb', step.limits.crosstalkDb, 'Crosstalk', note);
    }
  }
}

/**
 * A THD limit judged on one harmonic is a limit on that harmonic: THD sums H2, H3, … (IEEE 1241),
 * and below Nyquist (fs/2) only some of them can be read. With fewer than two the figure is a lower
 * bound that would pass a unit whose H3 breaks the limit, so it is refused, not judged.
 */
function whyTooFewHarmonics(step: Extract<CheckStep, { kind: 'distortion' }>, reading: Reading): string | null {
  if (!step.limits.thdDb) return null;
  // THD here sums H2 to H10 (the meter's count): a reading that counted fewer would leave out what
  // it did not look for, and its THD would pass a unit whose distortion lies higher up.
  const counted = new Set([...reading.harmonics.map((h) => h.order), ...reading.harmonicsAboveNyquist]);
  const notCounted = Array.from({ length: DEFAULT_ANALYZER_OPTIONS.harmonicCount - 1 }, (_, i) => i + 2).filter((order) => !counted.has(order));
  if (notCounted.length > 0) {
    return `Step “${step.id}” limits THD, which sums H2–H${DEFAULT_ANALYZER_OPTIONS.harmonicCount}, and the reading did not count H${notCounted.join(', H')}: take the reading with the station's meter.`;
  }
  const nyquist = reading.sampleRateHz / 2;
  const f = reading.fundamental.frequencyHz;
  // H2 and H3 are the two a THD figure cannot do without (even and odd order).
  const below = [2, 3].filter((order) => order * f < nyquist).length;
  if (below >= 2) return null;
  return (
    `Step “${step.id}” limits THD at ${hz(step.frequencyHz)}, and at ${reading.sampleRateHz} Hz sampling only ${below === 0 ? 'no harmonic lies' : 'H2 lies'} below Nyquist (${hz(nyquist)}): ` +
    `THD cannot be measured. Use a sample rate above ${Math.ceil((6 * f) / 1000)} kHz (96 kHz reads up to H4 of 10 kHz), or limit the harmonics by name in the procedure.`
  );
}

function measureDistortion(step: Extract<CheckStep, { kind: 'distortion' }>, reading: Reading): CheckResult {
  const measured: { m: Measurement; label: string }[] = [];
  const above = reading.harmonicsAboveNyquist;
  const counted = reading.harmonics.map((h) => h.order);
  const sumNote = above.length > 0 && counted.length > 0 ? `the sum of H${Math.min(...counted)}–H${Math.max(...counted)}; H${above.join(', H')} lie above Nyquist and are not in it` : null;
  const atFloor = reading.flags.includes('at-floor') ? 'within 6 dB of the station chain’s own residual: the value may be the station’s, not the unit’s' : null;
  const notes = (...parts: (string | null)[]) => parts.filter((p): p is string => p !== null).join('; ') || null;
  const { thdDb, thdnDb, harmonicsDbc } = step.limits;
  // THD from the harmonics themselves (RSS over the fundamental): the rule main judges the trim by.
  if (thdDb) measured.push({ m: measurement('thdDb', thdDbFromHarmonics(reading.harmonics), thdDb, notes(sumNote, atFloor)), label: 'THD' });
  if (thdnDb) measured.push({ m: measurement('thdnDb', reading.thdnDb, thdnDb, atFloor), label: 'THD+N' });
  for (const [name, limit] of Object.entries(harmonicsDbc ?? {})) {
    if (!limit) continue;
    const level = harmonicLevel(reading, Number(name.slice(1)));
    measured.push({
      m: level.measured ? measurement(`harmonicsDbc.${name}`, level.levelDbc, limit, level.note) : measurement(`harmonicsDbc.${name}`, null, limit, level.message),
      label: name,
    });
  }
  return checkResult(step, measured);
}

function measureGain(step: Extract<CheckStep, { kind: 'gain' }>, reading: Reading, stimulus: StimulusSetting, levels: StationLevels): CheckResult {
  // Gain is the level at the unit's output over the level at its input, both in dBu (0 dBu = √0.6 V
  // RMS): the generator's dBFS lifted by the output calibration, the reading's by the input's.
  const inputDbu = stimulus.levelDbfs + levels.outputDbuAtFullScale;
  const outputDbu = reading.fundamental.levelDbfs + levels.inputDbuAtFullScale;
  const note = `${round(outputDbu, 2)} dBu out for ${round(inputDbu, 2)} dBu in`;
  return checkResult(step, [{ m: measurement('gainDb', outputDbu - inputDbu, step.limits.gainDb, note), label: 'Gain' }]);
}

/**
 * A noise figure below the thermal noise of a 150 Ω source over the reading's band cannot have come
 * through a real input (the rule the chain check applies to the station's own floor): the input is
 * not connected to anything that makes noise, or its calibration is wrong.
 */
function whyBelowThermalNoise(reading: Reading, levels: StationLevels): string | null {
  const unweightedDbu = dbuOf(reading.noiseDbfs, levels.inputDbuAtFullScale);
  const floor = checkChainFloorDbu(unweightedDbu, { bandwidthHz: reading.bandHz.highHz - reading.bandHz.lowHz });
  if (floor.ok) return null;
  return `The noise reads ${round(unweightedDbu)} dBu unweighted over ${band(reading.bandHz)}, below the thermal noise of a 150 Ω source over that band (${round(floor.thermalDbu)} dBu), which no real input can read: the input is not connected to the unit, or the station's input calibration is wrong.`;
}

function measureNoise(step: Extract<CheckStep, { kind: 'noise' }>, reading: Reading, levels: StationLevels): CheckResult {
  // The meter states noise in dBFS referred to a full-scale sine (AES17), so the input's dBu at full
  // scale carries it to dBu unchanged.
  const dbfs = step.weighting === 'A' ? reading.noiseAWeightedDbfs : reading.noiseDbfs;
  const note = `${step.weighting === 'A' ? 'A-weighted (IEC 61672)' : 'unweighted'}, ${band(reading.bandHz)}; tones (mains hum, any stray tone) are taken out of it`;
  return checkResult(step, [{ m: measurement('noiseDbu', dbuOf(dbfs, levels.inputDbuAtFullScale), step.limits.noiseDbu, note), label: step.weighting === 'A' ? 'Noise (A-weighted)' : 'Noise' }]);
}

function measureHum(step: Extract<CheckStep, { kind: 'hum' }>, reading: Reading, levels: StationLevels): CheckResult {
  const limit = step.limits.humDbu;
  const found = reading.hum;
  const search = reading.humSearch;
  if (!found && !search) {
    const note = 'no hum stood out, and the reading does not say the level it had to exceed to stand out, so no bound can be given: take a new reading';
    return checkResult(step, [{ m: measurement('humDbu', null, limit, note), label: 'Hum (upper bound)' }]);
  }
  // With hum standing out, its components are read at the mains frequency found; otherwise the
  // meter fitted every order at nominal mains and none exceeded its threshold, so each fitted
  // order's component is at most that threshold (10 dB above the noise in the window's equivalent
  // noise bandwidth): the power sum of those thresholds bounds the hum from above. The fit at
  // nominal reads a drifted component a little low (under 0.5 dB up to the 5th order for a grid
  // within 0.2 Hz of nominal, common practice, at the meter's 1.46 Hz bins); the bound does not add that.
  const bound = found === null;
  const mainsHz = found ? found.frequencyHz : (search as HumSearch).mainsHz;
  const resolutionHz = RESOLVABLE_BINS * (reading.sampleRateHz / reading.frameSize);
  // With the generator off the meter takes the strongest tone for its fundamental (whyNotQuiet has
  // made sure it is mains or a multiple, or no signal) and leaves any hum order on it or its
  // harmonics out of the hum: that tone is the hum there.
  const unitTones = [{ frequencyHz: reading.fundamental.frequencyHz, levelDbfs: reading.fundamental.levelDbfs }, ...reading.harmonics.map((h) => ({ frequencyHz: h.frequencyHz, levelDbfs: reading.fundamental.levelDbfs + h.levelDbc }))];
  const summed: number[] = [];
  const read: number[] = [];
  const asTone: number[] = [];
  const aboveNyquist: number[] = [];
  const unread: number[] = [];
  for (let order = 1; order <= step.mainsHarmonics; order++) {
    if (order * mainsHz >= reading.sampleRateHz / 2) {
      aboveNyquist.push(order);
      continue;
    }
    const level = found ? found.components.find((c) => c.order === order)?.levelDbfs : (search as HumSearch).orders.includes(order) ? (search as HumSearch).thresholdDbfs : undefined;
    // At nominal mains the order may lie up to the drift the meter allows from where it is.
    const tone = unitTones.find((t) => Math.abs(t.frequencyHz - order * mainsHz) < resolutionHz + (bound ? order * MAINS_DRIFT_HZ : 0));
    if (level !== undefined) {
      summed.push(level);
      read.push(order);
    }
    // A tone beside a fitted order is added too when only a bound is given: it is the loudest thing there.
    if (tone && (level === undefined || bound)) {
      summed.push(tone.levelDbfs);
      asTone.push(order);
    }
    if (level === undefined && !tone) unread.push(order);
  }
  const orders = (list: number[]) => `harmonic${list.length === 1 ? '' : 's'} ${list.join(', ')}`;
  const notes = bound
    ? [
        `no component of ${hz(mainsHz)} mains stood 10 dB above the noise in the meter's bandwidth: an upper bound for the hum` +
          (read.length > 0 ? `, the power sum of the level each of ${orders(read)} had to exceed (${round((search as HumSearch).thresholdDbfs)} dBFS)` : ''),
      ]
    : [`${hz(mainsHz)} mains; the power sum of ${read.map((o) => (o === 1 ? 'the fundamental' : `harmonic ${o}`)).join(', ') || 'no component'}`];
  if (asTone.length > 0) notes.push(`${orders(asTone)} read as the strongest tone's`);
  if (aboveNyquist.length > 0) notes.push(`${orders(aboveNyquist)} at or above Nyquist, not in the sum`);
  // A component the step asks for and the meter did not read may be the loudest: no value, no pass.
  if (unread.length > 0) {
    const note = `mains ${orders(unread)} not read by the meter, so the hum the step asks for was not measured`;
    return checkResult(step, [{ m: measurement('humDbu', null, limit, note), label: bound ? 'Hum (upper bound)' : 'Hum' }]);
  }
  const value = summed.length > 0 ? dbuOf(powerSumDb(summed), levels.inputDbuAtFullScale) : null;
  return checkResult(step, [{ m: measurement('humDbu', value, limit, notes.join('; ')), label: bound ? 'Hum (upper bound)' : 'Hum' }]);
}

function twoChannel(step: Extract<CheckStep, { kind: 'balance' | 'crosstalk' }>, first: ChannelReading, second: ChannelReading, quantity: string, limit: Limit, label: string, note: string | null): CheckOutcome {
  // Both channels see the same drive, so the difference of their output levels in dBu is the
  // difference of their gains (balance), or the undriven channel's level relative to the driven
  // one (crosstalk). measureCheckStep has made sure both inputs are calibrated.
  const a = first.reading.fundamental.levelDbfs + (first.inputDbuAtFullScale as number);
  const b = second.reading.fundamental.levelDbfs + (second.inputDbuAtFullScale as number);
  return { ok: true, result: checkResult(step, [{ m: measurement(quantity, b - a, limit, note), label }]) };
}

/**
 * Check steps are the kinds judged from the meter's readings (recordCheckStep); notice and trim are
 * judged elsewhere, and ringing from a scope record (ringing.ts).
 */
export function isCheckStep(step: ProcedureStep): step is CheckStep {
  return step.kind !== 'notice' && step.kind !== 'trim' && step.kind !== 'ringing';
}
