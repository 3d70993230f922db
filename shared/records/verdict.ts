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
  /** The generator's frequency when the point was recorded; null for points stored before it was. */
  stimulusHz: number | null;
  reading: Reading;
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
  } else if (!a.bracketed && a.nullPositionPlusMinus === null) {
    reasons.push('The null was neither bracketed nor located within a stated uncertainty: record points on both sides of it.');
  }
  if (a && a.nullPosition !== null && fitProblem === null && a.recommendedPosition === null) {
    reasons.push(`There is no recommended setting yet${a.recommendationNote ? `: ${a.recommendationNote}` : '.'}`);
  }

  const at = `The final point (${final.sequence}, at ${turns(final.position, unit)})`;
  if (!final.settled) reasons.push(`${at} was recorded before its reading settled.`);
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
