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
  fit: TrimFit | null;
  /** Why there is no fit yet, when there is none. */
  fitProblem: string | null;
  bracketed: boolean;
  side: 'short-of-null' | 'past-null' | null;
  nextPosition: number;
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
const LIVE_READINGS_PER_SECOND = 6;
/** Growth only counts once the sub-audio level stands this far above the safe end's. */
const LF_GROWTH_ABOVE_BASELINE_DB = 6;
/** No single suggested move goes further than this many steps beyond the furthest point. */
const MAX_MOVE_STEPS = 16;

const round = (value: number, grid: number) => Math.round(value / grid) * grid;
const amplitude = (levelDbc: number) => 10 ** (levelDbc / 20);
const fixed = (value: number, decimals = 2) => value.toFixed(decimals);

export function adviseTrim(points: readonly TrimPointData[], options: Partial<TrimAssistantOptions> = {}, live: LiveSeries | null = null): TrimAdvice {
  const settings = { ...DEFAULT_TRIM_ASSISTANT_OPTIONS, ...options };
  const { positionMin, positionMax, positionStep } = settings;
  const clamp = (p: number) => Math.min(positionMax, Math.max(positionMin, p));
  const grid = positionStep / 4;
  if (points.length === 0) {
    return {
      fit: null,
      fitProblem: 'no trim points yet: record the first one at the safe end',
      bracketed: false,
      side: null,
      nextPosition: positionMin,
      recommendedPosition: null,
      recommendedLevelDbc: null,
      recommendationNote: null,
      thermal: null,
      warnings: [],
    };
  }
  const latest = points[points.length - 1];
  const furthest = Math.max(...points.map((p) => p.position));

  let fit: TrimFit | null = null;
  let fitProblem: string | null = null;
  try {
    fit = fitTrimCurve(points, settings.fit);
  } catch (error) {
    if (!(error instanceof TrimFitError)) throw error;
    fitProblem = error.message;
  }

  const warnings = collectWarnings(points, settings, live);
  if (!fit) {
    return {
      fit,
      fitProblem,
      bracketed: false,
      side: null,
      nextPosition: clamp(round(latest.position + FIRST_MOVE_STEPS * positionStep, grid)),
      recommendedPosition: null,
      recommendedLevelDbc: null,
      recommendationNote: null,
      thermal: null,
      warnings,
    };
  }

  const nullPosition = fit.nullPosition;
  const used = points.filter((_, i) => i !== fit.excludedPoint);
  const bracketed = used.some((p) => p.position < nullPosition) && used.some((p) => p.position > nullPosition);
  const side = latest.position > nullPosition ? 'past-null' : 'short-of-null';
  if (side === 'past-null') {
    warnings.push({
      id: 'past-null',
      seen: `The trimmer at ${fixed(latest.position)} is past the predicted null at ${fixed(nullPosition)} ± ${fixed(fit.nullPositionPlusMinus)}: over-compensation.`,
      advice: 'Turn back toward the safe end, to the recommended setting.',
    });
  }

  // Next: bracket the null by going at most one step past it; once bracketed, measure its bottom.
  const nearest = Math.min(...used.map((p) => Math.abs(p.position - nullPosition)));
  let next: number;
  const remaining = nullPosition - latest.position;
  // Far from a predicted null, close most of the way but stay short: the straight-line model is a
  // small-range approximation, and a long extrapolation can overshoot into over-compensation.
  if (!bracketed && remaining > APPROACH_STEPS * positionStep) next = latest.position + APPROACH_FRACTION * remaining;
  else if (!bracketed) next = nullPosition + Math.min(positionStep, Math.max(fit.nullPositionPlusMinus, grid));
  else if (nearest > positionStep / 4) next = nullPosition;
  else next = nullPosition - recommendedOffset(fit, settings).offset; // done: go to the recommended setting
  next = Math.min(next, nullPosition + positionStep, furthest + MAX_MOVE_STEPS * positionStep);
  next = clamp(round(next, grid));

  const { offset, note } = recommendedOffset(fit, settings);
  // Not rounded to the step grid: rounding could carry it out of the margin or past the null.
  const recommendedPosition = clamp(nullPosition - offset);
  const recommendedLevelDbc = fit.predictDbc(recommendedPosition);
  const first = points[0];
  const thermal = thermalMargin(amplitude(first.levelDbc), amplitude(recommendedLevelDbc), amplitude(settings.limitDbc));

  return {
    fit,
    fitProblem,
    bracketed,
    side,
    nextPosition: next,
    recommendedPosition,
    recommendedLevelDbc,
    recommendationNote: note,
    thermal,
    warnings,
  };
}

/**
 * How far short of the null to leave the trimmer: the farthest point whose predicted level stays
 * within the margin of the null depth and inside the limit. |H|² = f² + s²·Δ², so Δ = √(L² − f²)/s.
 */
function recommendedOffset(fit: TrimFit, settings: TrimAssistantOptions): { offset: number; note: string | null } {
  const depth = amplitude(fit.nullLevelDbc);
  const withinMargin = depth * 10 ** (settings.marginDb / 20);
  const limit = amplitude(settings.limitDbc);
  if (depth >= limit) {
    return { offset: 0, note: `The predicted null (${fixed(fit.nullLevelDbc, 1)} dBc) does not reach the limit (${settings.limitDbc} dBc): set the null and check the unit.` };
  }
  const bound = Math.min(withinMargin, limit);
  return { offset: Math.sqrt(bound * bound - depth * depth) / fit.slopePerPosition, note: null };
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
    warnings.push({
      id: 'gain-rise',
      seen: `Gain at the test frequency is up ${fixed(latest.gainDb - first.gainDb)} dB from the safe end (threshold ${settings.gainRiseDb} dB).`,
      advice: 'Net resistance is heading negative: back the trimmer off toward the safe end.',
    });
  }
  const firstLf = points.find((p) => p.lfDbfs !== null)?.lfDbfs ?? null;
  const pointLf = points.map((p) => p.lfDbfs).filter((v): v is number => v !== null);
  const latestLf = live?.lfDbfs.at(-1) ?? pointLf.at(-1) ?? null;
  // Growth counts in the live series (readings since the trimmer last moved), sampled about a
  // second apart so one transient passing through the slow sub-audio window is not taken for it.
  const growing = firstLf !== null && latestLf !== null && latestLf - firstLf > LF_GROWTH_ABOVE_BASELINE_DB && isGrowing(everyNth(live?.lfDbfs ?? [], LIVE_READINGS_PER_SECOND).slice(-4));
  if (firstLf !== null && latestLf !== null && (latestLf - firstLf > settings.lfRiseDb || growing)) {
    warnings.push({
      id: 'lf-instability',
      seen: growing
        ? `Sub-audio level is growing from reading to reading (now ${fixed(latestLf, 1)} dBFS, ${fixed(latestLf - firstLf, 1)} dB above the safe end).`
        : `Sub-audio level is ${fixed(latestLf - firstLf, 1)} dB above the safe end's (${fixed(latestLf, 1)} dBFS).`,
      advice: 'Low-frequency instability is starting: turn the trimmer back toward the safe end now; keep speakers disconnected.',
    });
  }
  // The last two seconds or so: with the trimmer still and the reading settled, the level should hold.
  const still = (live?.levelsDbfs ?? []).slice(-2 * LIVE_READINGS_PER_SECOND);
  if (still.length >= 5 && Math.max(...still) - Math.min(...still) > settings.wanderDb) {
    warnings.push({
      id: 'amplitude-wander',
      seen: `The fundamental's level wanders by ${fixed(Math.max(...still) - Math.min(...still))} dB with the trimmer still.`,
      advice: 'The stage is close to instability: back the trimmer off toward the safe end and let it settle.',
    });
  }
  if (latest.clipping) {
    warnings.push({
      id: 'clipping',
      seen: 'The input is clipping.',
      advice: 'Lower the level into the interface; a clipped reading cannot be trusted.',
    });
  }
  return warnings;
}

/** Every n-th value counted back from the newest, oldest first. */
function everyNth(series: readonly number[], n: number): number[] {
  const picked: number[] = [];
  for (let i = series.length - 1; i >= 0; i -= n) picked.unshift(series[i]);
  return picked;
}

/** Strictly rising over the last readings by more than 3 dB in all. */
function isGrowing(series: number[]): boolean {
  if (series.length < 3) return false;
  for (let i = 1; i < series.length; i++) if (series[i] <= series[i - 1]) return false;
  return series[series.length - 1] - series[0] > 3;
}
