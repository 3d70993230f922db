// The trim assistant: from the trim points so far, where the null is, which side of it the trimmer
// is on, where to go next, the setting to leave it at (always on the safe side), the warnings that
// say over-compensation or low-frequency instability is coming, and the thermal margin.

import { fitTrimCurve, TrimFitError, type TrimFit, type TrimFitOptions, type TrimObservation } from './trim-model.ts';

export interface TrimPointData extends TrimObservation {
  /** Fundamental level at the test frequency (dBFS, constant stimulus): the stage's gain plus a constant. */
  gainDb: number | null;
  /** Sub-audio level (dBFS). */
  lfDbfs: number | null;
  clipping?: boolean;
  /** THD of the reading, dB (tells an oscillating stage from one where instability is starting). */
  thdDb?: number | null;
  /** The fundamental's frequency as read, Hz. */
  fundamentalHz?: number | null;
}

export interface TrimAssistantOptions {
  positionMin: number;
  positionMax: number;
  positionStep: number;
  /** Harmonic limit at the final setting, dBc. */
  limitDbc: number;
  /** The recommended setting keeps the predicted level within this many dB of the null. */
  marginDb: number;
  gainRiseDb: number;
  lfRiseDb: number;
  /** Spread of the fundamental's level, with the trimmer still, that counts as wandering. */
  wanderDb: number;
  /** The tone the generator plays, Hz, when known: a fundamental read far from it means oscillation. */
  stimulusHz: number | null;
  fit: Partial<TrimFitOptions>;
}

export const DEFAULT_TRIM_ASSISTANT_OPTIONS: TrimAssistantOptions = {
  positionMin: 0,
  positionMax: 10,
  positionStep: 0.25,
  limitDbc: -60,
  marginDb: 1,
  gainRiseDb: 0.5,
  lfRiseDb: 10,
  wanderDb: 0.2,
  stimulusHz: null,
  fit: {},
};

export type TrimWarningId = 'gain-rise' | 'lf-instability' | 'amplitude-wander' | 'clipping' | 'past-null';

export interface TrimWarning {
  id: TrimWarningId;
  /** What was seen, with the numbers. */
  seen: string;
  /** What to do. */
  advice: string;
}

/** Live readings since the trimmer last moved (for warnings that need a series). */
export interface LiveSeries {
  levelsDbfs: number[];
  lfDbfs: number[];
}

export interface ThermalMargin {
  /** Temperature change either way over which the residual at the recommended setting stays inside the limit, °C. */
  deltaTemperatureC: number;
  /** Copper's temperature coefficient used, per °C (IEC 60028). */
  alphaPerC: number;
}

export interface TrimAdvice {
  /** The fit, only when it can be trusted (then fitProblem is null). */
  fit: TrimFit | null;
  /** Why there is no trustworthy fit: what is wrong and what to check. */
  fitProblem: string | null;
  bracketed: boolean;
  side: 'short-of-null' | 'past-null' | null;
  nextPosition: number;
  /** Null while the null is too uncertain for a setting that is safely short of it. */
  recommendedPosition: number | null;
  /** Predicted level at the recommended setting, dBc. */
  recommendedLevelDbc: number | null;
  recommendationNote: string | null;
  thermal: ThermalMargin | null;
  warnings: TrimWarning[];
}

/** Copper's temperature coefficient of resistance at 20 °C (IEC 60028, annealed copper). */
export const COPPER_ALPHA_PER_C = 0.00393;
/** Without a fit, the first move is this many steps: enough for the slope to show. */
const FIRST_MOVE_STEPS = 4;
/** Beyond this many steps from a predicted null, the next move closes only part of the way… */
const APPROACH_STEPS = 2;
/** …this fraction of it. */
const APPROACH_FRACTION = 0.8;
/** Live readings arrive about this often (the live meter's rate). */
export const LIVE_READINGS_PER_SECOND = 6;
/** Growth only counts once the sub-audio level stands this far above the safe end's. */
const LF_GROWTH_ABOVE_BASELINE_DB = 6;
/** No single suggested move goes further than this many steps beyond the furthest point. */
const MAX_MOVE_STEPS = 16;
/**
 * The recommendation stays this many standard deviations of the null's position short of it: one
 * sided, a true null on the short side of it is then a few-in-ten-thousand event.
 */
const SAFE_SIDE_SIGMAS = 3.5;
/** A recommendation is given only when its predicted level is within the margin plus this much of the depth. */
const RECOMMENDATION_SLACK_DB = 1;
/** Below this slope-to-standard-error ratio the readings show no clear effect of the trimmer. */
const SLOPE_SIGNIFICANCE = 3;
/** The ratio of a 95 % half-width to one standard deviation (normal distribution). */
const Z95 = 1.96;
/** In full oscillation THD is at least this (the waveform is no longer the stimulus). */
const OSCILLATION_THD_DB = -20;
/** …or the fundamental is read this far from the stimulus, relative. */
const OSCILLATION_FREQUENCY_ERROR = 0.05;
/** …or the sub-audio level stands this far above the safe end's. */
const OSCILLATION_LF_RISE_DB = 40;

const round = (value: number, grid: number) => Math.round(value / grid) * grid;
const floorTo = (value: number, grid: number) => Math.floor(value / grid + 1e-9) * grid;
const amplitude = (levelDbc: number) => 10 ** (levelDbc / 20);
const fixed = (value: number, decimals = 2) => value.toFixed(decimals);

export function adviseTrim(points: readonly TrimPointData[], options: Partial<TrimAssistantOptions> = {}, live: LiveSeries | null = null): TrimAdvice {
  const settings = { ...DEFAULT_TRIM_ASSISTANT_OPTIONS, ...options };
  const { positionMin, positionMax, positionStep } = settings;
  const clamp = (p: number) => Math.min(positionMax, Math.max(positionMin, p));
  const grid = positionStep / 4;
  const noFit = (fitProblem: string, nextPosition: number, warnings: TrimWarning[] = []): TrimAdvice => ({
    fit: null,
    fitProblem,
    bracketed: false,
    side: null,
    nextPosition: clamp(round(nextPosition, grid)),
    recommendedPosition: null,
    recommendedLevelDbc: null,
    recommendationNote: null,
    thermal: null,
    warnings,
  });
  if (points.length === 0) return noFit('no trim points yet: record the first one at the safe end', positionMin);
  const latest = points[points.length - 1];
  const furthest = Math.max(...points.map((p) => p.position));
  const warnings = collectWarnings(points, settings, live);
  const further = furthest + FIRST_MOVE_STEPS * positionStep;

  let fit: TrimFit;
  try {
    fit = fitTrimCurve(points, settings.fit);
  } catch (error) {
    if (!(error instanceof TrimFitError)) throw error;
    // Too few points, or points that follow no trim curve: record further along, or again here.
    const again = /do not follow one trim curve/.test(error.message);
    return noFit(error.message, again ? latest.position : further, warnings);
  }
  const trouble = untrustworthy(fit, points, settings);
  if (trouble) return noFit(trouble.problem, trouble.next, warnings);

  const nullPosition = fit.nullPosition;
  const plusMinus = fit.nullPositionPlusMinus;
  const used = points.filter((_, i) => i !== fit.excludedPoint);
  const bracketed = used.some((p) => p.position < nullPosition) && used.some((p) => p.position > nullPosition);
  const side = latest.position > nullPosition ? 'past-null' : 'short-of-null';
  const pastNull = pastNullWarning(latest.position, fit);
  if (pastNull) warnings.push(pastNull);

  const { offset: marginOffset, allowedDbc, note } = recommendedOffset(fit, settings);
  // Short of the null by the margin and by enough of the null's uncertainty (one sided).
  const safetyOffset = SAFE_SIDE_SIGMAS * (plusMinus / Z95);
  const candidate = clamp(nullPosition - Math.max(marginOffset, safetyOffset));
  const candidateLevelDbc = fit.predictDbc(candidate);
  const safeEnough = candidateLevelDbc <= allowedDbc + 0.01 && candidate <= nullPosition;
  const recommendedPosition = safeEnough ? candidate : null;

  let next: number;
  const remaining = nullPosition - latest.position;
  if (recommendedPosition !== null) {
    // Done: go to the recommended setting, rounded toward the safe end.
    next = Math.max(positionMin, floorTo(recommendedPosition, grid));
  } else if (!bracketed && remaining > APPROACH_STEPS * positionStep) {
    // Far from a predicted null, close most of the way but stay short of it and of its near bound
    // (unless that is no real move): the straight line is a small-range approximation.
    const nearBound = Math.max(nullPosition - plusMinus, latest.position + FIRST_MOVE_STEPS * positionStep);
    next = Math.min(latest.position + APPROACH_FRACTION * remaining, nearBound);
  } else {
    // Near the null: the points that pin it down lie closest to it (their noise is least), on both
    // sides; while it is still uncertain by more than a step, a step either side brackets it.
    const offsets = plusMinus > positionStep ? [0, -positionStep, positionStep] : [0, -grid, grid, -2 * grid, 2 * grid];
    const candidates = offsets.map((offset) => clamp(round(nullPosition, grid) + offset));
    const taken = (c: number) => points.filter((p) => Math.abs(p.position - c) < grid / 2).length;
    next = candidates.reduce((best, c) => (taken(c) < taken(best) ? c : best));
  }
  // At most one step past the null's far bound, and no wild jumps.
  const cap = Math.min(nullPosition + plusMinus + positionStep, furthest + MAX_MOVE_STEPS * positionStep);
  next = clamp(Math.min(round(next, grid), floorTo(cap, grid)));

  const recommendedLevelDbc = recommendedPosition !== null ? fit.predictDbc(recommendedPosition) : null;
  const first = points[0];
  const thermal = recommendedLevelDbc !== null ? thermalMargin(amplitude(first.levelDbc), amplitude(recommendedLevelDbc), amplitude(settings.limitDbc)) : null;
  const recommendationNote =
    recommendedPosition === null
      ? `The null (${fixed(nullPosition)} ± ${fixed(plusMinus)}) is not yet known well enough for a setting that is surely short of it: record the next point at ${fixed(next)}.`
      : note;

  return { fit, fitProblem: null, bracketed, side, nextPosition: next, recommendedPosition, recommendedLevelDbc, recommendationNote, thermal, warnings };
}

/** A fit that computes but says nothing trustworthy: what is wrong, what to check, where to record next. */
function untrustworthy(fit: TrimFit, points: readonly TrimPointData[], settings: TrimAssistantOptions): { problem: string; next: number } | null {
  const { positionMin, positionMax, positionStep } = settings;
  const span = positionMax - positionMin;
  const positions = points.map((p) => p.position);
  const furthest = Math.max(...positions);
  const covered = furthest - Math.min(...positions);
  const further = furthest + FIRST_MOVE_STEPS * positionStep;
  const levels = points.map((p) => p.levelDbc);
  if (!(fit.slopeSignificance >= SLOPE_SIGNIFICANCE) || !Number.isFinite(fit.nullPosition)) {
    const moved = Math.max(...levels) - Math.min(...levels);
    const where = furthest < positionMax ? `record a point further along, at ${fixed(Math.min(positionMax, further))}; if it still does not change, ` : '';
    return {
      problem: `The readings barely change with the trimmer (${fixed(moved, 1)} dB over ${fixed(covered)} ${covered === 1 ? 'turn' : 'turns'}): ${where}check the trimmer is in circuit and the right channel is captured.`,
      next: further,
    };
  }
  if (fit.nullPosition - fit.nullPositionPlusMinus > positionMax) {
    return {
      problem: `The predicted null lies beyond the trimmer's end (${fixed(positionMax)}): the trimmer cannot reach it. Check the trimmer's range and value, the stage's wiring and that the right harmonic is trimmed.`,
      next: further,
    };
  }
  if (fit.nullPosition + fit.nullPositionPlusMinus < positionMin) {
    return {
      problem: `The distortion rises as the trimmer adds compensation, so the null lies before its safe end: check the trimmer's direction and the sense of the compensation winding.`,
      next: positionMin,
    };
  }
  if (!(fit.nullPositionPlusMinus <= span / 2)) {
    return {
      problem: `These points cannot locate the null yet (its uncertainty spans more than half the trimmer's range): record a point further along, at ${fixed(Math.min(positionMax, further))}.`,
      next: further,
    };
  }
  return null;
}

/**
 * Past the null, judged at a position against the null's confidence: beyond its far bound the
 * trimmer is past it with about 97.5 % confidence (a bracketing point one step past the bound is
 * too, and the warning then says to turn back, which is the next move anyway).
 */
export function pastNullWarning(position: number, fit: TrimFit): TrimWarning | null {
  const bound = fit.nullPosition + fit.nullPositionPlusMinus;
  if (!(position > bound + 1e-9)) return null;
  return {
    id: 'past-null',
    seen: `The trimmer at ${fixed(position)} is past the null at ${fixed(fit.nullPosition)} ± ${fixed(fit.nullPositionPlusMinus)}: over-compensation.`,
    advice: 'Turn back toward the safe end, to the recommended setting.',
  };
}

/**
 * How far short of the null to leave the trimmer: the farthest point whose predicted level stays
 * within the margin of the null depth and inside the limit. |H|² = f² + s²·Δ², so Δ = √(L² − f²)/s.
 * Also the highest predicted level a recommendation may have once the null's uncertainty is added.
 */
function recommendedOffset(fit: TrimFit, settings: TrimAssistantOptions): { offset: number; allowedDbc: number; note: string | null } {
  const depth = amplitude(fit.nullLevelDbc);
  const withinMargin = depth * 10 ** (settings.marginDb / 20);
  const limit = amplitude(settings.limitDbc);
  const slackDbc = fit.nullLevelDbc + settings.marginDb + RECOMMENDATION_SLACK_DB;
  if (depth >= limit) {
    return {
      offset: 0,
      allowedDbc: slackDbc,
      note: `The predicted null (${fixed(fit.nullLevelDbc, 1)} dBc) does not reach the limit (${settings.limitDbc} dBc): set the recommended setting and check the unit.`,
    };
  }
  const bound = Math.min(withinMargin, limit);
  return { offset: Math.sqrt(bound * bound - depth * depth) / fit.slopePerPosition, allowedDbc: Math.min(slackDbc, settings.limitDbc), note: null };
}

/**
 * Copper's resistance follows R(T) = R20·(1 + α·(T − 20 °C)). Untracked, a change ΔT leaves about
 * α·ΔT of the uncompensated distortion behind (design §5); the margin is the ΔT that keeps the
 * residual at the recommended setting, added in the worst phase, inside the limit.
 */
export function thermalMargin(uncompensated: number, residual: number, limit: number): ThermalMargin | null {
  if (!(uncompensated > 0) || residual >= limit) return null;
  return { deltaTemperatureC: (limit - residual) / (COPPER_ALPHA_PER_C * uncompensated), alphaPerC: COPPER_ALPHA_PER_C };
}

/** Above this the thermal margin is printed as "more than": the copper model means little that far out. */
export const THERMAL_MARGIN_CAP_C = 50;

/** The thermal margin in plain words, for the screen and the sheet. */
export function describeThermalMargin(deltaTemperatureC: number | null): string | null {
  if (deltaTemperatureC === null || !Number.isFinite(deltaTemperatureC)) return null;
  const amount = deltaTemperatureC > THERMAL_MARGIN_CAP_C ? `more than ${THERMAL_MARGIN_CAP_C} °C` : `up to ${Math.max(0, Math.floor(deltaTemperatureC))} °C`;
  return `stays inside the limit for a winding temperature change of ${amount} either way, even with no thermal tracking`;
}

export interface WarmRecheck {
  temperatureRiseC: number;
  /** Change of the harmonic between the cold and the warm reading (linear ratio to the fundamental). */
  measuredDrift: number;
  /** What the change would have been with no thermal tracking at all. */
  untrackedDrift: number;
  /** 1 = the unit's own tracking cancelled the whole untracked drift, 0 = none of it. */
  trackingFraction: number;
}

/** Compares a warm re-check with the cold reading at the same setting. */
export function warmRecheck(
  cold: { levelDbc: number; phaseDeg: number | null; temperatureC: number },
  warm: { levelDbc: number; phaseDeg: number | null; temperatureC: number },
  safeEndLevelDbc: number,
): WarmRecheck {
  const rise = warm.temperatureC - cold.temperatureC;
  const phasor = (r: { levelDbc: number; phaseDeg: number | null }) => {
    const a = amplitude(r.levelDbc);
    const radians = ((r.phaseDeg ?? 0) * Math.PI) / 180;
    return [a * Math.cos(radians), a * Math.sin(radians)];
  };
  const bothPhases = cold.phaseDeg !== null && warm.phaseDeg !== null;
  const [cr, ci] = phasor(cold);
  const [wr, wi] = phasor(warm);
  // Without phases only the change in magnitude is known: a lower bound on the drift.
  const measuredDrift = bothPhases ? Math.hypot(wr - cr, wi - ci) : Math.abs(amplitude(warm.levelDbc) - amplitude(cold.levelDbc));
  const untrackedDrift = COPPER_ALPHA_PER_C * Math.abs(rise) * amplitude(safeEndLevelDbc);
  const trackingFraction = untrackedDrift > 0 ? Math.min(1, Math.max(0, 1 - measuredDrift / untrackedDrift)) : 1;
  return { temperatureRiseC: rise, measuredDrift, untrackedDrift, trackingFraction };
}

function collectWarnings(points: readonly TrimPointData[], settings: TrimAssistantOptions, live: LiveSeries | null): TrimWarning[] {
  const warnings: TrimWarning[] = [];
  const first = points[0];
  const latest = points[points.length - 1];
  if (first.gainDb !== null && latest.gainDb !== null && latest.gainDb - first.gainDb > settings.gainRiseDb) {
    warnings.push(gainRiseWarning(latest.gainDb - first.gainDb, settings.gainRiseDb));
  }
  const baselineLf = safeEndLf(points);
  const pointLf = points.map((p) => p.lfDbfs).filter((v): v is number => v !== null);
  const latestLf = live?.lfDbfs.at(-1) ?? pointLf.at(-1) ?? null;
  // Growth counts in the live series (readings since the trimmer last moved), sampled about a
  // second apart so one transient passing through the slow sub-audio window is not taken for it.
  const growing = baselineLf !== null && live !== null && live.lfDbfs.length > 0 && lfGrowing(live.lfDbfs, baselineLf);
  if (baselineLf !== null && latestLf !== null && (latestLf - baselineLf > settings.lfRiseDb || growing)) {
    const signs = { lfDbfs: latestLf, thdDb: latest.thdDb ?? null, fundamentalHz: latest.fundamentalHz ?? null };
    warnings.push(lfInstabilityWarning(isOscillating(baselineLf, signs, settings.stimulusHz), baselineLf, signs, growing ? 'rising' : 'steady', settings.stimulusHz));
  }
  // The last two seconds or so: with the trimmer still and the reading settled, the level should hold.
  const still = (live?.levelsDbfs ?? []).slice(-2 * LIVE_READINGS_PER_SECOND);
  if (still.length >= 5 && Math.max(...still) - Math.min(...still) > settings.wanderDb) {
    warnings.push(amplitudeWanderWarning(Math.max(...still) - Math.min(...still)));
  }
  if (latest.clipping) warnings.push(CLIPPING_WARNING);
  return warnings;
}

/** The sub-audio level at the safe end: the first point that has one. */
export function safeEndLf(points: readonly TrimPointData[]): number | null {
  return points.find((p) => p.lfDbfs !== null)?.lfDbfs ?? null;
}

export interface OscillationSigns {
  lfDbfs: number;
  thdDb: number | null;
  fundamentalHz: number | null;
}

/**
 * In full oscillation the output is no longer the stimulus: THD is huge, the fundamental may be
 * read far from the tone played, and the sub-audio level is enormous.
 */
export function isOscillating(baselineLfDbfs: number, signs: OscillationSigns, stimulusHz: number | null): boolean {
  const offTone = stimulusHz !== null && signs.fundamentalHz !== null && Math.abs(signs.fundamentalHz - stimulusHz) > OSCILLATION_FREQUENCY_ERROR * stimulusHz;
  return (signs.thdDb !== null && signs.thdDb > OSCILLATION_THD_DB) || offTone || signs.lfDbfs - baselineLfDbfs > OSCILLATION_LF_RISE_DB;
}

/** Which way the sub-audio level is heading over the last seconds. */
export type LfTrend = 'rising' | 'falling' | 'steady';

export function lfInstabilityWarning(oscillating: boolean, baselineLfDbfs: number, signs: OscillationSigns, heading: LfTrend, stimulusHz: number | null): TrimWarning {
  const above = `${fixed(signs.lfDbfs - baselineLfDbfs, 1)} dB above the safe end's (${fixed(baselineLfDbfs, 1)} dBFS)`;
  if (oscillating) {
    const thd = signs.thdDb !== null ? `; THD ${fixed(signs.thdDb, 1)} dB` : '';
    const tone = signs.fundamentalHz !== null && stimulusHz !== null ? `; fundamental read at ${fixed(signs.fundamentalHz, 1)} Hz for a ${fixed(stimulusHz, 1)} Hz tone` : '';
    return {
      id: 'lf-instability',
      seen: `The stage is oscillating at low frequency: sub-audio level ${fixed(signs.lfDbfs, 1)} dBFS, ${above}${thd}${tone}.`,
      advice: 'Turn the trimmer back toward the safe end now and keep speakers disconnected; no reading means anything until the oscillation stops.',
    };
  }
  if (heading === 'falling') {
    // After the trimmer came back from an oscillation the level dies away over seconds: that is
    // recovery, not a new instability, and the advice is to wait, not to turn further.
    return {
      id: 'lf-instability',
      seen: `Sub-audio level is falling back: ${fixed(signs.lfDbfs, 1)} dBFS, still ${above}.`,
      advice: 'The stage is recovering from low-frequency instability: leave the trimmer where it is, on the safe side, until this clears; keep speakers disconnected.',
    };
  }
  return {
    id: 'lf-instability',
    seen: `Sub-audio level is ${heading === 'rising' ? 'rising from reading to reading' : 'up'}: ${fixed(signs.lfDbfs, 1)} dBFS, ${above}.`,
    advice: 'Low-frequency instability is starting: turn the trimmer back toward the safe end now; keep speakers disconnected.',
  };
}

export function gainRiseWarning(riseDb: number, thresholdDb: number): TrimWarning {
  return {
    id: 'gain-rise',
    seen: `Gain at the test frequency is up ${fixed(riseDb)} dB from the safe end (threshold ${thresholdDb} dB).`,
    advice: 'Net resistance is heading negative: back the trimmer off toward the safe end.',
  };
}

export function amplitudeWanderWarning(spreadDb: number): TrimWarning {
  return {
    id: 'amplitude-wander',
    seen: `The fundamental's level wanders by ${fixed(spreadDb)} dB with the trimmer still.`,
    advice: 'The stage is close to instability: back the trimmer off toward the safe end and let it settle.',
  };
}

export const CLIPPING_WARNING: TrimWarning = {
  id: 'clipping',
  seen: 'The input is clipping.',
  // Past the null an oscillating stage drives itself to the rails: turning the input gain down would hide it.
  advice: 'If the trimmer is past the null or the stage is oscillating, turn it back toward the safe end first; otherwise lower the level into the interface. A clipped reading cannot be trusted.',
};

/** Strictly rising samples taken about a second apart, over the last few seconds. */
export function lfGrowing(lfDbfs: readonly number[], baselineLfDbfs: number): boolean {
  const latest = lfDbfs.at(-1);
  return latest !== undefined && latest - baselineLfDbfs > LF_GROWTH_ABOVE_BASELINE_DB && isGrowing(everyNth(lfDbfs, LIVE_READINGS_PER_SECOND).slice(-4));
}

/** Every n-th value counted back from the newest, oldest first. */
function everyNth(series: readonly number[], n: number): number[] {
  const picked: number[] = [];
  for (let i = series.length - 1; i >= 0; i -= n) picked.unshift(series[i]);
  return picked;
}

/** Strictly falling over the last few seconds by more than 3 dB in all. */
export function lfFalling(lfDbfs: readonly number[]): boolean {
  const picked = everyNth(lfDbfs, LIVE_READINGS_PER_SECOND).slice(-4);
  return isGrowing(picked.map((value) => -value));
}

/** Strictly rising over the last readings by more than 3 dB in all. */
function isGrowing(series: number[]): boolean {
  if (series.length < 3) return false;
  for (let i = 1; i < series.length; i++) if (series[i] <= series[i - 1]) return false;
  return series[series.length - 1] - series[0] > 3;
}
