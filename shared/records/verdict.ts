// Pass/fail for the trim step. A PASS has to be earned: the trim was done (the null located, the
// trimmer left at the recommended setting on its safe side), the final reading is a settled
// measurement of the stimulus, no warning stands, and THD there is within the limit. Anything less
// is a FAIL with its reasons in plain sentences. Called by main when finishing, and by the page to
// say before Finish what is still missing.

import type { Reading } from '../measurement/reading.ts';
import type { Procedure } from '../procedures/procedure.ts';
import type { TrimAssessment } from '../trim/assessment.ts';
import { checkStimulus, checkStimulusSetting } from './stimulus-check.ts';

export type Verdict = 'pass' | 'fail';

/** A reading exactly at the limit passes (limits are "at or below"). */
export function judgeThd(finalThdDb: number, limitThdDb: number): Verdict {
  return finalThdDb <= limitThdDb ? 'pass' : 'fail';
}

export interface JudgedPoint {
  sequence: number;
  position: number;
  settled: boolean;
  inFit: boolean;
  /** When the technician confirmed an unsettled point into the fit; null or absent otherwise. */
  confirmedAt?: string | null;
  /** The generator's frequency when the point was recorded; null for points stored before it was. */
  stimulusHz: number | null;
  reading: Reading;
  /**
   * False when the point came without the live readings since the trimmer moved, so the warnings
   * that need them (level wander, rising sub-audio) were never looked for there. Main knows it;
   * left out (the page's view), nothing is assumed.
   */
  liveWatched?: boolean;
}

export interface JudgedRun {
  trimPoints: readonly JudgedPoint[];
  /** The latest assessment (after the final point, and after any confirmation). */
  assessment: TrimAssessment | null;
  /** Warnings the live watch raised and has not cleared (from the run's warning log). */
  openLiveWarnings?: readonly { id: string; seen: string }[];
}

export interface TrimJudgement {
  verdict: Verdict;
  /** Why it cannot pass, one plain sentence each; empty on a pass. */
  reasons: string[];
}

const turns = (value: number, unit: string) => `${value.toFixed(2)} ${unit}`;

export function judgeTrimRun(run: JudgedRun, trim: Procedure['trim']): TrimJudgement {
  const reasons: string[] = [];
  const unit = trim.positionUnit;
  const final = run.trimPoints.at(-1);
  if (!final) return { verdict: 'fail', reasons: ['No trim point has been recorded.'] };
  const a = run.assessment;

  const fitProblem = a?.fitProblem ?? null;
  if (!a || fitProblem !== null || a.nullPosition === null) {
    reasons.push(
      fitProblem !== null
        ? `The null was not located: ${fitProblem}`
        : 'The null was not located: record more trim points, moving toward more compensation.',
    );
  } else if (!a.bracketed && !(a.nullPositionPlusMinus !== null && a.nullPositionPlusMinus <= trim.positionStep)) {
    // Located: points on both sides of it, or its uncertainty no wider than one step either way,
    // which is as finely as the technician can set the trimmer anyway.
    const stated = a.nullPositionPlusMinus === null ? 'with no stated uncertainty' : `± ${turns(a.nullPositionPlusMinus, unit)}`;
    reasons.push(
      `The null (${turns(a.nullPosition, unit)} ${stated}) was neither bracketed nor located to within one trimmer step ` +
        `(±${turns(trim.positionStep, unit)}): record points on both sides of it.`,
    );
  }
  if (a && a.nullPosition !== null && fitProblem === null && a.recommendedPosition === null) {
    reasons.push(`There is no recommended setting yet${a.recommendationNote ? `: ${a.recommendationNote}` : '.'}`);
  }

  const at = `The final point (${final.sequence}, at ${turns(final.position, unit)})`;
  // Every reading a PASS rests on must be settled, the final one above all: confirming an unsettled
  // point lets the fit use it, never the verdict rest on it.
  if (!final.settled) {
    reasons.push(
      final.confirmedAt
        ? `${at} was recorded before its reading settled; confirming it into the fit does not make it a settled reading. Record a settled point there.`
        : `${at} was recorded before its reading settled.`,
    );
  }
  if (final.liveWatched === false) {
    reasons.push(
      `${at} was recorded without the live readings since the trimmer moved, so level wander and rising sub-audio were never looked for there: ` +
        'move the trimmer off and back and record it again from the bench.',
    );
  }
  if (!final.inFit) reasons.push(`${at} is left out of the fit (unsettled and not confirmed).`);

  const stimulus = { on: true, frequencyHz: final.stimulusHz ?? trim.stimulusHz, levelDbfs: trim.stimulusLevelDbfs };
  const setting = final.stimulusHz === null ? null : checkStimulusSetting(stimulus, trim);
  if (setting) reasons.push(`${at} was measured with the wrong stimulus: ${setting}`);
  const check = checkStimulus(final.reading, stimulus, trim);
  if (!check.ok) reasons.push(`${at} is not a measurement of the stimulus: ${check.message}`);

  if (a && a.recommendedPosition !== null && Math.abs(final.position - a.recommendedPosition) > trim.positionStep / 2) {
    reasons.push(
      `The trimmer was left at ${turns(final.position, unit)}, not at the recommended ${turns(a.recommendedPosition, unit)} ` +
        `(within half a step, ±${turns(trim.positionStep / 2, unit)}).`,
    );
  }
  if (a?.side === 'past-null') reasons.push('The trimmer was left past the null (over-compensated).');
  for (const warning of a?.warnings ?? []) reasons.push(`A warning stands at the final point: ${warning.seen}`);
  for (const warning of run.openLiveWarnings ?? []) {
    if (!a?.warnings.some((w) => w.id === warning.id)) reasons.push(`A warning raised while watching has not cleared: ${warning.seen}`);
  }
  if (judgeThd(final.reading.thdDb, trim.limitThdDb) === 'fail') {
    reasons.push(`THD ${final.reading.thdDb.toFixed(1)} dB at the final point is above the limit of ${trim.limitThdDb} dB.`);
  }
  return { verdict: reasons.length === 0 ? 'pass' : 'fail', reasons };
}
