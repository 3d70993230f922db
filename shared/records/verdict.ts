// Pass/fail for the trim step: THD at the final trim point against the procedure's limit.
// A reading exactly at the limit passes (limits are "at or below").

export type Verdict = 'pass' | 'fail';

export function judgeThd(finalThdDb: number, limitThdDb: number): Verdict {
  return finalThdDb <= limitThdDb ? 'pass' : 'fail';
}
