// Pass/fail for the trim step: THD at the final trim point against the procedure's limit.
// A reading exactly at the limit passes (limits are "at or below").

export type Verdict = 'pass' | 'fail';

export function judgeThd(finalThdDb: number, limitThdDb: number): Verdict {
  return finalThdDb <= limitThdDb ? 'pass' : 'fail';
}

export interface TrimJudgement {
  verdict: Verdict;
  /** Why it failed; null on a pass. */
  reason: string | null;
}

/**
 * The trim step's verdict: THD at the final point within the limit, and the trimmer not left past
 * the null (an over-compensated unit can turn unstable later, whatever its distortion reads now).
 */
export function judgeTrim(finalThdDb: number, limitThdDb: number, finalSide: 'short-of-null' | 'past-null' | null): TrimJudgement {
  if (judgeThd(finalThdDb, limitThdDb) === 'fail') {
    return { verdict: 'fail', reason: `THD ${finalThdDb.toFixed(1)} dB at the final point is above the limit of ${limitThdDb} dB` };
  }
  if (finalSide === 'past-null') return { verdict: 'fail', reason: 'the trimmer was left past the null (over-compensated)' };
  return { verdict: 'pass', reason: null };
}
