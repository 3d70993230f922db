// The `response` check step: the sweep a step plays, whether a capture may be analysed as the
// unit's answer to it, the correction by the station's chain response, and the judgement of the
// response against the step's mask and of H2–H5 against their limits. Main judges with it from the
// raw capture (analyzeSweepResponse runs there); the page plans the sweep and draws with it.
//
// Only types come from procedure-file.ts: the page uses this module and must not pull zod in.

import { STEP_MAX_OFFSET_PERCENT, type ChainResponse } from '../calibration/chain-response.ts';
import { logSweepLayout, type LogSweepSpec } from '../dsp/log-sweep.ts';
import { peakFromDbfs, signedFixed } from '../levels.ts';
import type { SweepResponse } from '../measurement/sweep-response.ts';
import { CHECK_LEVEL_WINDOW_DB, measurement, playedLevel, type CheckResult, type Measurement, type StationLevels } from './check-steps.ts';
import type { ProcedureStep } from './procedure-file.ts';

export type ResponseStep = Extract<ProcedureStep, { kind: 'response' }>;

/**
 * How much longer than the stimulus a capture may be, seconds: the round trip through an interface
 * and its buffers is well under this (common practice: tens of milliseconds), and the page starts
 * collecting a little before the sweep plays. Bounds what main accepts.
 */
export const RESPONSE_CAPTURE_MARGIN_S = 1;

/**
 * A float capture at or above this magnitude has reached the converter's full scale (±1.0): the
 * input clipped somewhere in the sweep, and a clipped sweep reads as distortion and a flattened
 * response that are the interface's, not the unit's.
 */
export const RESPONSE_CLIP_LEVEL = 0.999;

/** The sweep a step plays at this rate, or why it cannot be played on this station. */
export type SweepPlan = { ok: true; spec: LogSweepSpec; levelDbu: number | null; totalS: number } | { ok: false; refusal: string };

/**
 * How far below the step's band the sweep starts, octaves. The analysis reads the response near the
 * sweep's start too flat (its window there holds few cycles) and cannot resolve the harmonics there
 * at all; a transformer stage distorts most and rolls off at exactly that end. Started an octave
 * lower, the band's lowest frequency is read as well as any other.
 */
export const SWEEP_LEAD_IN_OCTAVES = 1;

/**
 * The step's sweep at `sampleRateHz`: from SWEEP_LEAD_IN_OCTAVES below `fromHz` to `toHz`, at the
 * sweep rate `durationS` sets for the band (so the lead-in adds its share of time, and the band's
 * resolution is what the procedure's author chose); the level converted from dBu with the output
 * calibration as a tone's would be.
 */
export function sweepSpecFor(step: ResponseStep, sampleRateHz: number, levels: StationLevels | null): SweepPlan {
  const level = playedLevel(step.id, step.level, levels, 0);
  if (!level.ok) return level;
  const startHz = step.fromHz / 2 ** SWEEP_LEAD_IN_OCTAVES;
  const durationS = (step.durationS * Math.log(step.toHz / startHz)) / Math.log(step.toHz / step.fromHz);
  const spec: LogSweepSpec = { startHz, endHz: step.toHz, durationS, sampleRateHz, levelDbfs: level.levelDbfs };
  try {
    const layout = logSweepLayout(spec);
    return { ok: true, spec, levelDbu: level.levelDbu, totalS: layout.totalLength / sampleRateHz };
  } catch (error) {
    if (!(error instanceof RangeError)) throw error;
    return { ok: false, refusal: `Step “${step.id}” cannot sweep at ${sampleRateHz} Hz sampling: ${error.message}. Use another sample rate, or correct the step.` };
  }
}

/** Most samples a capture of this sweep may hold: the stimulus plus RESPONSE_CAPTURE_MARGIN_S. */
export function maxCaptureSamples(spec: LogSweepSpec): number {
  return logSweepLayout(spec).totalLength + Math.ceil(RESPONSE_CAPTURE_MARGIN_S * spec.sampleRateHz);
}

/**
 * Why a capture may not be analysed as the unit's answer to the sweep, or null. The analysis itself
 * refuses a capture of another sweep or of none; this refuses what it would read without noticing:
 * a clipped input, and a capture so far below the level played that the wrong input, a dead unit or
 * a pad is being read (the same sanity window as the tone checks, CHECK_LEVEL_WINDOW_DB).
 */
export function whyCaptureUnusable(samples: ArrayLike<number>, spec: LogSweepSpec, expectedPeak: number): string | null {
  const layout = logSweepLayout(spec);
  if (samples.length < layout.totalLength) {
    return `The capture holds ${(samples.length / spec.sampleRateHz).toFixed(2)} s, less than the ${(layout.totalLength / spec.sampleRateHz).toFixed(2)} s the sweep plays: run the sweep again and let it finish.`;
  }
  if (samples.length > maxCaptureSamples(spec)) {
    return `The capture holds ${(samples.length / spec.sampleRateHz).toFixed(2)} s, more than the sweep and ${RESPONSE_CAPTURE_MARGIN_S} s: run the sweep again.`;
  }
  let peak = 0;
  for (let i = 0; i < samples.length; i++) {
    const v = samples[i];
    if (!Number.isFinite(v)) return `The capture holds a sample that is not a number (at ${i}): run the sweep again.`;
    peak = Math.max(peak, Math.abs(v));
  }
  if (peak >= RESPONSE_CLIP_LEVEL) return 'The input clipped during the sweep: lower the input gain (or the step is too loud for this interface), then run the sweep again.';
  const floor = expectedPeak * 10 ** (-CHECK_LEVEL_WINDOW_DB / 20);
  if (peak < floor) {
    const dbBelow = peak > 0 ? (20 * Math.log10(expectedPeak / peak)).toFixed(0) : 'far more than ' + CHECK_LEVEL_WINDOW_DB;
    return `The capture is ${dbBelow} dB below the sweep played: the unit's output does not reach the input being captured. Check the capture channel, the cables and that the unit is powered, then run the sweep again.`;
  }
  return null;
}

/** The sweep's peak expected at the input of a unity-gain stage: the level played, carried to the input's dBFS when both ends are calibrated. */
export function expectedCapturePeak(spec: LogSweepSpec, levelDbu: number | null, inputDbuAtFullScale: number | null): number {
  const dbfs = levelDbu !== null && inputDbuAtFullScale !== null ? levelDbu - inputDbuAtFullScale : spec.levelDbfs;
  return peakFromDbfs(dbfs);
}

// ---- interpolation on a log-frequency axis ------------------------------------------------------

/** Linear in log frequency between the neighbouring points; null outside the points' span. */
function interpolateLogF(points: readonly { f: number; v: number }[], f: number): number | null {
  if (points.length === 0 || f < points[0].f || f > points[points.length - 1].f) return null;
  for (let i = 1; i < points.length; i++) {
    const a = points[i - 1];
    const b = points[i];
    if (f <= b.f) {
      if (b.f === a.f) return b.v;
      const t = Math.log(f / a.f) / Math.log(b.f / a.f);
      return a.v + t * (b.v - a.v);
    }
  }
  return points[0].v;
}

/** The mask's bounds at f, linear in log frequency between its points (docs/procedures.md); null outside its first–last span. */
export function maskBoundsAt(mask: ResponseStep['mask'], f: number): { low: number | null; high: number | null } | null {
  if (f < mask[0].frequencyHz || f > mask[mask.length - 1].frequencyHz) return null;
  const low = mask[0].lowDb === undefined ? null : interpolateLogF(mask.map((p) => ({ f: p.frequencyHz, v: p.lowDb as number })), f);
  const high = mask[0].highDb === undefined ? null : interpolateLogF(mask.map((p) => ({ f: p.frequencyHz, v: p.highDb as number })), f);
  return { low, high };
}

// ---- correction by the chain's response -------------------------------------------------------

export type ChainCorrection = { ok: true; response: SweepResponse } | { ok: false; reason: string };

/**
 * The unit's response with the station's own (interface output looped to input, from the chain
 * check of the run's calibration) taken out: L(f) − (C(f) − C(ref)), C linear in log frequency
 * between the chain's third-octave steps. Only inside the steps' span (widened by the planner's
 * offset): outside it the chain is unknown, and an extrapolated correction would be invented.
 */
export function correctByChain(response: SweepResponse, chain: ChainResponse): ChainCorrection {
  const points = chain.points.map((p) => ({ f: p.frequencyHz, v: p.relativeDb }));
  if (points.length < 2) return { ok: false, reason: 'the chain check measured fewer than two response steps' };
  const slack = 1 + STEP_MAX_OFFSET_PERCENT / 100;
  const first = points[0].f;
  const last = points[points.length - 1].f;
  // A step planned a little off its preferred frequency still stands for its band edge: hold its value that far.
  const at = (f: number) => interpolateLogF(points, Math.min(last, Math.max(first, f)));
  const from = response.response[0].frequencyHz;
  const to = response.response[response.response.length - 1].frequencyHz;
  if (from < first / slack || to > last * slack) {
    return { ok: false, reason: `the chain check's response covers ${first.toFixed(1)}–${last.toFixed(0)} Hz, not the step's ${from}–${to} Hz` };
  }
  const atReference = at(response.referenceHz) as number;
  return {
    ok: true,
    response: { ...response, response: response.response.map((p) => ({ ...p, levelDb: p.levelDb - ((at(p.frequencyHz) as number) - atReference) })) },
  };
}

// ---- the judgement -----------------------------------------------------------------------------

/** The response as stored with the step's result, for the plot: compact, rounded past what a plot or a limit can show. */
export interface ResponseCurve {
  referenceHz: number;
  latencySamples: number;
  sampleRateHz: number;
  /** Whether the station's chain response was taken out, and if not, why. */
  corrected: boolean;
  uncorrectedReason: string | null;
  /** [frequency Hz, level dB relative to the reference, phase ° with the latency removed (not corrected by the chain)]. */
  response: [number, number, number][];
  /** [fundamental's frequency Hz, product level dBc]. */
  harmonics: { order: number; points: [number, number][] }[];
}

const round = (v: number, step: number) => Math.round(v / step) * step;
const fixedDb = (v: number) => v.toFixed(2).replace('-', '−');
const hz = (f: number) => (f >= 1000 ? `${(f / 1000).toFixed(f >= 10000 ? 1 : 2)} kHz` : `${f.toFixed(f < 100 ? 1 : 0)} Hz`);

export function responseCurve(response: SweepResponse, sampleRateHz: number, corrected: boolean, uncorrectedReason: string | null): ResponseCurve {
  return {
    referenceHz: response.referenceHz,
    latencySamples: response.latencySamples,
    sampleRateHz,
    corrected,
    uncorrectedReason,
    response: response.response.map((p) => [round(p.frequencyHz, 0.001), round(p.levelDb, 0.0001), round(p.phaseDeg, 0.1)]),
    harmonics: response.harmonics.map((h) => ({ order: h.order, points: h.points.map((p) => [round(p.frequencyHz, 0.001), round(p.levelDbc, 0.01)]) })),
  };
}

/**
 * Where the response comes closest to the mask: the smallest distance inside it over the mask's
 * span, negative outside. Both the response and the bounds are linear in log frequency between their
 * own points, so the smallest distance lies at one of either's points: both sets are evaluated.
 */
export function maskMargin(mask: ResponseStep['mask'], response: readonly { frequencyHz: number; levelDb: number }[]): { marginDb: number; atHz: number; levelDb: number; bound: 'low' | 'high' } | null {
  const curve = response.map((p) => ({ f: p.frequencyHz, v: p.levelDb }));
  const frequencies = [...mask.map((p) => p.frequencyHz), ...response.map((p) => p.frequencyHz)];
  let worst: { marginDb: number; atHz: number; levelDb: number; bound: 'low' | 'high' } | null = null;
  for (const f of frequencies) {
    const bounds = maskBoundsAt(mask, f);
    const level = interpolateLogF(curve, f);
    if (!bounds || level === null) continue;
    for (const [bound, margin] of [
      ['low', bounds.low === null ? null : level - bounds.low],
      ['high', bounds.high === null ? null : bounds.high - level],
    ] as const) {
      if (margin !== null && (worst === null || margin < worst.marginDb)) worst = { marginDb: margin, atHz: f, levelDb: level, bound };
    }
  }
  return worst;
}

/** How far above the band's start (1/12 octave, the response's own spacing) a harmonic's first readable point may lie and still stand for it. */
const HARMONIC_START_TOLERANCE = 2 ** (1 / 12);

/** The mask margin's limit: the response must stay inside the mask (a margin of 0 dB is on a bound, which passes: limits are inclusive). */
export const MASK_MARGIN_LIMIT = { low: 0, unit: 'dB' } as const;

/**
 * The step's measurements from an analysed (and, where possible, corrected) response: the mask
 * margin, and for each limited harmonic its worst level over the band where it can be read. A
 * limited harmonic the sweep cannot resolve anywhere has no value, and fails.
 */
export function judgeResponse(step: ResponseStep, response: SweepResponse, correction: { corrected: boolean; note: string }): CheckResult {
  const measured: { m: Measurement; label: string }[] = [];
  const worst = maskMargin(step.mask, response.response);
  let where = 'the response covers none of the mask';
  if (worst) {
    const boundDb = worst.bound === 'low' ? worst.levelDb - worst.marginDb : worst.levelDb + worst.marginDb;
    const side = worst.marginDb >= 0 ? `closest to its ${worst.bound} bound` : worst.bound === 'low' ? 'below its low bound' : 'above its high bound';
    where = `response ${signedFixed(worst.levelDb, 2)} dB at ${hz(worst.atHz)}, ${side} of ${signedFixed(boundDb, 2)} dB`;
  }
  measured.push({ m: measurement('maskMarginDb', worst ? round(worst.marginDb, 0.0001) : null, MASK_MARGIN_LIMIT, `${where}; ${correction.note}`), label: 'Mask margin' });
  for (const [name, limit] of Object.entries(step.limits?.harmonicsDbc ?? {})) {
    if (!limit) continue;
    const order = Number(name.slice(1));
    const series = response.harmonics.find((h) => h.order === order);
    const quantity = `harmonicsDbc.${name}`;
    if (!series || series.points.length === 0) {
      const why = response.unresolved.find((u) => u.order === order)?.reason ?? `${name} could not be read`;
      measured.push({ m: measurement(quantity, null, limit, why), label: name });
      continue;
    }
    const span = `${hz(series.points[0].frequencyHz)}–${hz(series.points[series.points.length - 1].frequencyHz)}`;
    // The bottom of the band is where a transformer stage distorts most: a worst level read only
    // above it would pass a unit over its limit there. The top ends by itself at toHz / n.
    if (series.points[0].frequencyHz > step.fromHz * HARMONIC_START_TOLERANCE) {
      measured.push({ m: measurement(quantity, null, limit, `${name} could be read only over ${span}, not from ${hz(step.fromHz)} where the band starts; make the sweep longer`), label: name });
      continue;
    }
    const top = series.points.reduce((a, b) => (b.levelDbc > a.levelDbc ? b : a));
    measured.push({ m: measurement(quantity, round(top.levelDbc, 0.01), limit, `worst over ${span} (by the fundamental's frequency), at ${hz(top.frequencyHz)}`), label: name });
  }
  const reasons = measured
    .filter(({ m }) => m.verdict === 'fail')
    .map(({ m, label }) => {
      if (m.value === null) return `${label} was not measured: ${m.note}.`;
      if (m.quantity === 'maskMarginDb') return `The response leaves its mask by ${fixedDb(-m.value)} dB: ${where}.`;
      return m.high !== null && m.value > m.high
        ? `${label} reaches ${m.value.toFixed(1)} dBc, above the high limit of ${m.high.toFixed(1)} dBc.`
        : `${label} ${m.value.toFixed(1)} dBc is outside its limits.`;
    });
  return { stepId: step.id, kind: step.kind, verdict: reasons.length === 0 ? 'pass' : 'fail', measurements: measured.map(({ m }) => m), reasons };
}
