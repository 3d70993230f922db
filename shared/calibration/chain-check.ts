// The chain check's result as stored data, the station's limits for it, and the judgement. The
// judgement is decision logic: the page shows it and main stores it, both from this one function.

import type { LevelCalibration } from '../levels.ts';
import { bandDeviation, ISO_266_THIRD_OCTAVE_HZ, RESPONSE_REFERENCE_HZ, STEP_MAX_OFFSET_PERCENT, TOP_FRACTION_OF_SAMPLE_RATE, type ChainResponse } from './chain-response.ts';
import type { LatencyEstimate } from './latency.ts';

export const CHAIN_CHECK_SCHEMA_VERSION = 1;

/** The loopback's own distortion at one test frequency and level. */
export interface ResidualDistortion {
  frequencyHz: number;
  /** Generator level, dBFS. */
  generatorDbfs: number;
  thdDb: number;
  thdnDb: number;
}

/** Generator off: what the chain adds by itself, in the THD+N band. */
export interface ChainNoiseFloor {
  bandLowHz: number;
  bandHighHz: number;
  unweightedDbfs: number;
  aWeightedDbfs: number;
  /** The same in dBu at the input, when an input calibration was given; else null. */
  unweightedDbu: number | null;
  aWeightedDbu: number | null;
}

/** Plain data (JSON as it is): main stores it with the calibration. */
export interface ChainCheckResult {
  schemaVersion: typeof CHAIN_CHECK_SCHEMA_VERSION;
  /** When it was measured, ISO 8601 with the UTC offset. */
  measuredAt: string;
  sampleRateHz: number;
  /** Input calibration used for the dBu figures, or null. */
  inputDbuAtFullScale: number | null;
  residuals: ResidualDistortion[];
  noiseFloor: ChainNoiseFloor | null;
  /** Null when not measured or refused; `responseRefusal` then says why. */
  response: ChainResponse | null;
  responseRefusal: string | null;
  /** Null when not measured or refused; `latencyRefusal` then says why. */
  latency: LatencyEstimate | null;
  latencyRefusal: string | null;
}

/** The noise floor with dBu beside dBFS when the input is calibrated (AES17 dBFS, so dBu = dBFS + dBu at 0 dBFS). */
export function chainNoiseFloor(
  measured: { bandLowHz: number; bandHighHz: number; unweightedDbfs: number; aWeightedDbfs: number },
  inputCalibration: LevelCalibration | null,
): ChainNoiseFloor {
  const offset = inputCalibration?.dbuAtFullScale ?? null;
  return {
    ...measured,
    unweightedDbu: offset === null ? null : measured.unweightedDbfs + offset,
    aWeightedDbu: offset === null ? null : measured.aWeightedDbfs + offset,
  };
}

/** A station's limits for its own chain. Each "max" is the highest value that still passes. */
export interface ChainLimits {
  /** Residual THD+N at 1 kHz, dB. */
  residualThdnAt1kHzMaxDb: number;
  /** Residual THD at and above `lowFrequencyBelowHz`, dB. */
  residualThdMaxDb: number;
  /** Residual THD below `lowFrequencyBelowHz`, dB. */
  residualThdLowFrequencyMaxDb: number;
  lowFrequencyBelowHz: number;
  noiseUnweightedMaxDbfs: number;
  noiseAWeightedMaxDbfs: number;
  /** Judged only when set and the input is calibrated. */
  noiseAWeightedMaxDbu: number | null;
  /** Response within ±flatnessDb of the 1 kHz step over the band (its top capped at 0.45 × the sample rate). */
  flatnessDb: number;
  flatnessBandLowHz: number;
  flatnessBandHighHz: number;
  /** A chain check without a latency is a loopback that did not carry the stimulus. */
  requireLatency: boolean;
}

/**
 * Invented defaults, sensible for a 24-bit interface in loopback (none comes from a standard):
 * - THD+N at 1 kHz −90 dB: the figure the issue names. Noise counts in it, so at a −12 dBFS tone
 *   it needs an unweighted floor near −102 dBFS; measure the 1 kHz residual near full scale.
 * - THD −90 dB, and −85 dB below 100 Hz, where converters' coupling capacitors and DC servos add
 *   low-order distortion: both 25 dB or more under the demo procedure's −60 dB limit, so the chain
 *   moves a unit's reading by well under 0.5 dB (common practice asks for 10 dB at least).
 * - Noise −97 dBFS unweighted and −100 dBFS A-weighted (20 Hz–20 kHz): a loopback adds the
 *   output's and the input's noise, so about 3 dB above either half; good interfaces of the trade
 *   state 110 dB(A) or more of dynamic range each (common practice, from memory).
 * - Flatness ±0.5 dB from 20 Hz to 20 kHz (common practice for line-level audio, from memory).
 */
export const DEFAULT_CHAIN_LIMITS: ChainLimits = {
  residualThdnAt1kHzMaxDb: -90,
  residualThdMaxDb: -90,
  residualThdLowFrequencyMaxDb: -85,
  lowFrequencyBelowHz: 100,
  noiseUnweightedMaxDbfs: -97,
  noiseAWeightedMaxDbfs: -100,
  noiseAWeightedMaxDbu: null,
  flatnessDb: 0.5,
  flatnessBandLowHz: 20,
  flatnessBandHighHz: 20000,
  requireLatency: true,
};

/** Says so wherever the defaults are shown. */
export const DEFAULT_CHAIN_LIMITS_NOTE = 'Default chain limits are invented but sensible, not taken from a standard; set the line\'s own.';

// A value at the limit passes; this much float rounding (a difference of dB figures) still counts as at it.
const LIMIT_ROUNDING_DB = 1e-9;

export type ChainCheckItemKind =
  | 'residual-thd'
  | 'residual-thdn'
  | 'noise-unweighted'
  | 'noise-a-weighted'
  | 'noise-a-weighted-dbu'
  | 'response-flatness'
  | 'latency';

export interface ChainCheckItem {
  kind: ChainCheckItemKind;
  /** What was judged, e.g. "Residual THD at 20 Hz, −12 dBFS". */
  label: string;
  /** Null when it was not measured. */
  value: number | null;
  limit: number | null;
  unit: string;
  pass: boolean;
  reason: string;
}

export interface ChainCheckJudgement {
  pass: boolean;
  items: ChainCheckItem[];
}

/** Every item of the chain check against the station's limits; the check passes when every item does. */
export function judgeChainCheck(result: ChainCheckResult, limits: ChainLimits = DEFAULT_CHAIN_LIMITS): ChainCheckJudgement {
  const items: ChainCheckItem[] = [];
  const atMost = (kind: ChainCheckItemKind, label: string, value: number | null, limit: number, unit: string, missing: string): void => {
    if (value === null || !Number.isFinite(value)) {
      items.push({ kind, label, value: null, limit, unit, pass: false, reason: missing });
      return;
    }
    const pass = value <= limit + LIMIT_ROUNDING_DB;
    items.push({
      kind,
      label,
      value,
      limit,
      unit,
      pass,
      reason: `${fmt(value)} ${unit} ${pass ? 'is at or below' : 'is above'} the limit of ${fmt(limit)} ${unit}`,
    });
  };

  const slack = 1 + STEP_MAX_OFFSET_PERCENT / 100;
  const near1kHz = (f: number) => Math.abs(Math.log(f / RESPONSE_REFERENCE_HZ)) <= Math.log(slack);
  for (const r of result.residuals) {
    const where = `${fmtHz(r.frequencyHz)} Hz, ${fmt(r.generatorDbfs)} dBFS`;
    const low = r.frequencyHz < limits.lowFrequencyBelowHz;
    atMost('residual-thd', `Residual THD at ${where}`, r.thdDb, low ? limits.residualThdLowFrequencyMaxDb : limits.residualThdMaxDb, 'dB', `THD at ${where} is not a number; run the chain check again.`);
    if (near1kHz(r.frequencyHz)) {
      atMost('residual-thdn', `Residual THD+N at ${where}`, r.thdnDb, limits.residualThdnAt1kHzMaxDb, 'dB', `THD+N at ${where} is not a number; run the chain check again.`);
    }
  }
  if (!result.residuals.some((r) => near1kHz(r.frequencyHz))) {
    items.push({
      kind: 'residual-thdn',
      label: 'Residual THD+N at 1 kHz',
      value: null,
      limit: limits.residualThdnAt1kHzMaxDb,
      unit: 'dB',
      pass: false,
      reason: 'No residual was measured at 1 kHz; the chain check must include a 1 kHz tone.',
    });
  }

  const noise = result.noiseFloor;
  const noNoise = 'The noise floor was not measured; run the chain check with the generator off for the noise step.';
  atMost('noise-unweighted', 'Noise floor, unweighted', noise?.unweightedDbfs ?? null, limits.noiseUnweightedMaxDbfs, 'dBFS', noNoise);
  atMost('noise-a-weighted', 'Noise floor, A-weighted', noise?.aWeightedDbfs ?? null, limits.noiseAWeightedMaxDbfs, 'dBFS', noNoise);
  if (limits.noiseAWeightedMaxDbu !== null) {
    atMost(
      'noise-a-weighted-dbu',
      'Noise floor, A-weighted, at the input',
      noise?.aWeightedDbu ?? null,
      limits.noiseAWeightedMaxDbu,
      'dBu',
      noise ? 'The input is not calibrated, so the floor has no dBu figure; calibrate the input first.' : noNoise,
    );
  }

  items.push(judgeFlatness(result, limits));

  if (result.latency) {
    items.push({
      kind: 'latency',
      label: 'Round-trip latency',
      value: result.latency.latencyMs,
      limit: null,
      unit: 'ms',
      pass: true,
      reason: `${fmt(result.latency.latencyMs)} ms (${result.latency.latencySamples} samples), correlation ${fmt(result.latency.confidence)} × the next peak` +
        (result.latency.inverted ? '; the loopback inverts polarity' : ''),
    });
  } else if (limits.requireLatency) {
    items.push({
      kind: 'latency',
      label: 'Round-trip latency',
      value: null,
      limit: null,
      unit: 'ms',
      pass: false,
      reason: result.latencyRefusal ?? 'The latency was not measured; run the chain check again.',
    });
  }

  return { pass: items.every((i) => i.pass), items };
}

function judgeFlatness(result: ChainCheckResult, limits: ChainLimits): ChainCheckItem {
  const highHz = Math.min(limits.flatnessBandHighHz, TOP_FRACTION_OF_SAMPLE_RATE * result.sampleRateHz);
  const band = `${fmtHz(limits.flatnessBandLowHz)} Hz–${fmtHz(highHz)} Hz`;
  const base = { kind: 'response-flatness' as const, label: `Response flatness ${band}`, limit: limits.flatnessDb, unit: 'dB' };
  if (!result.response) {
    return { ...base, value: null, pass: false, reason: result.responseRefusal ?? 'The frequency response was not measured; run the stepped sine.' };
  }
  const deviation = bandDeviation(result.response, limits.flatnessBandLowHz, highHz);
  // The band counts as covered when its lowest and highest preferred frequencies were stepped.
  const wanted = ISO_266_THIRD_OCTAVE_HZ.filter((f) => f >= limits.flatnessBandLowHz && f <= highHz);
  const slack = 1 + STEP_MAX_OFFSET_PERCENT / 100;
  const missingEnd =
    deviation === null || wanted.length === 0
      ? null
      : result.response.points[0].frequencyHz > wanted[0] * slack
        ? wanted[0]
        : result.response.points[result.response.points.length - 1].frequencyHz < wanted[wanted.length - 1] / slack
          ? wanted[wanted.length - 1]
          : null;
  if (deviation === null) {
    return { ...base, value: null, pass: false, reason: `No response step lies in ${band}; run the stepped sine.` };
  }
  if (missingEnd !== null) {
    return { ...base, value: deviation.worstDb, pass: false, reason: `The response was not measured at ${fmtHz(missingEnd)} Hz; run the full stepped sine.` };
  }
  const pass = deviation.worstDb <= limits.flatnessDb + LIMIT_ROUNDING_DB;
  return {
    ...base,
    value: deviation.worstDb,
    pass,
    reason:
      `${fmt(deviation.minDb)} to ${fmt(deviation.maxDb)} dB from the ${fmtHz(result.response.referenceHz)} Hz step, ` +
      `${pass ? 'within' : 'outside'} ±${fmt(limits.flatnessDb)} dB (worst at ${fmtHz(deviation.worstHz)} Hz)`,
  };
}

function fmt(x: number): string {
  const rounded = Math.abs(x) >= 100 ? x.toFixed(0) : Math.abs(x) >= 10 ? x.toFixed(1) : x.toFixed(2);
  return rounded.replace('-', '−');
}

// Frequencies as planned (1001.46 Hz, 12.5 Hz), without trailing zeros.
function fmtHz(hz: number): string {
  return Number(hz.toPrecision(6)).toString();
}
