// The trim assessment as plain data: what the assistant concluded after a trim point, stored with
// the run, shown live and printed on the unit sheet. Built from readings by the same code in main
// (the record) and in the page (the live banner), so both say the same thing.

import { harmonicLevel } from '../procedures/check-steps.ts';
import type { Reading } from '../measurement/reading.ts';
import type { Procedure } from '../procedures/procedure.ts';
import { adviseTrim, type LiveSeries, type TrimAdvice, type TrimAssistantOptions, type TrimPointData } from './trim-assistant.ts';

export interface TrimCurvePoint {
  position: number;
  levelDbc: number;
}

/** The assistant's advice (see TrimAdvice), with the fit flattened into plain, finite-or-null numbers. */
export interface TrimAssessment
  extends Pick<TrimAdvice, 'bracketed' | 'side' | 'nextPosition' | 'recommendedPosition' | 'recommendedLevelDbc' | 'recommendationNote' | 'warnings'> {
  /** The harmonic the trim works on (3 = H3). */
  harmonicOrder: number;
  model: 'phasor' | 'magnitude' | null;
  /** Why that model, or why there is no fit yet. */
  reason: string;
  /**
   * Non-null when there is no trustworthy fit (too few points, no effect of the trimmer, readings
   * off any trim curve, a null out of the trimmer's reach): what is wrong and what to check. Then
   * every null, recommendation and thermal number is null and the curve is empty.
   */
  fitProblem: string | null;
  nullPosition: number | null;
  nullPositionPlusMinus: number | null;
  nullLevelDbc: number | null;
  /** ± °C over which the residual at the recommended setting stays inside the limit, untracked (print it with describeThermalMargin). */
  thermalMarginC: number | null;
  excludedPoint: number | null;
  /** The fitted model sampled across the trimmer's range, for plots and the sheet. */
  curve: TrimCurvePoint[];
}

const CURVE_SAMPLES = 81;

/** A trim point as the assistant sees it: the chosen harmonic, the gain, the sub-audio level. */
export function trimPointData(position: number, reading: Reading, harmonicOrder: number): TrimPointData {
  // The one answer to "the level of harmonic n" (check-steps.ts). Where it has none (above Nyquist,
  // or not counted) the fit takes THD, the sum of every harmonic and so never below the missing
  // one: an upper bound, never the floor or zero, and with no phase.
  const level = harmonicLevel(reading, harmonicOrder);
  return {
    position,
    levelDbc: level.measured ? level.levelDbc : reading.thdDb,
    phaseDeg: level.measured ? (reading.harmonics.find((h) => h.order === harmonicOrder)?.phaseDeg ?? null) : null,
    gainDb: reading.fundamental.levelDbfs,
    lfDbfs: reading.subAudioDbfs,
    clipping: reading.flags.includes('clipping'),
    thdDb: reading.thdDb,
    fundamentalHz: reading.fundamental.frequencyHz,
  };
}

/** A recorded point as the assessment takes it: inFit false (an unconfirmed unsettled point) is shown, never used. */
export interface AssessedPoint {
  position: number;
  reading: Reading;
  /** Missing counts as true (points stored before unsettled points could be left out). */
  inFit?: boolean;
}

/** The procedure's trim step as the assistant's options. */
export function trimAssistantOptions(trim: Procedure['trim'], stimulusHz: number | null = trim.stimulusHz): Partial<TrimAssistantOptions> {
  return {
    positionMin: trim.positionMin,
    positionMax: trim.positionMax,
    positionStep: trim.positionStep,
    limitDbc: trim.limitThdDb,
    marginDb: trim.marginDb,
    gainRiseDb: trim.gainRiseDb,
    lfRiseDb: trim.lfRiseDb,
    stimulusHz,
  };
}

/** The points the fit and the warnings use, as the assistant sees them. */
export function fittedPointData(points: readonly AssessedPoint[], harmonicOrder: number): TrimPointData[] {
  return points.filter((p) => p.inFit !== false).map((p) => trimPointData(p.position, p.reading, harmonicOrder));
}

export function assessTrim(points: readonly AssessedPoint[], trim: Procedure['trim'], live: LiveSeries | null = null): TrimAssessment {
  const advice = adviseTrim(fittedPointData(points, trim.harmonicOrder), trimAssistantOptions(trim), live);
  const fit = advice.fit;
  // Stored and sent as JSON: a value the fit could not pin down is null, never ±Infinity or NaN.
  const finiteOrNull = (value: number | null | undefined) => (value !== null && value !== undefined && Number.isFinite(value) ? value : null);
  const curve: TrimCurvePoint[] = [];
  if (fit) {
    for (let i = 0; i < CURVE_SAMPLES; i++) {
      const position = trim.positionMin + ((trim.positionMax - trim.positionMin) * i) / (CURVE_SAMPLES - 1);
      const levelDbc = fit.predictDbc(position);
      if (Number.isFinite(levelDbc)) curve.push({ position, levelDbc });
    }
  }
  return {
    harmonicOrder: trim.harmonicOrder,
    model: fit?.model ?? null,
    reason: fit?.reason ?? advice.fitProblem ?? '',
    fitProblem: advice.fitProblem,
    nullPosition: finiteOrNull(fit?.nullPosition),
    nullPositionPlusMinus: finiteOrNull(fit?.nullPositionPlusMinus),
    nullLevelDbc: finiteOrNull(fit?.nullLevelDbc),
    bracketed: advice.bracketed,
    side: advice.side,
    nextPosition: advice.nextPosition,
    recommendedPosition: finiteOrNull(advice.recommendedPosition),
    recommendedLevelDbc: finiteOrNull(advice.recommendedLevelDbc),
    recommendationNote: advice.recommendationNote,
    thermalMarginC: finiteOrNull(advice.thermal?.deltaTemperatureC),
    excludedPoint: fit?.excludedPoint ?? null,
    warnings: advice.warnings,
    curve,
  };
}
