import { useEffect, useState } from 'react';
import type { RunDetail } from '../../shared/ipc/contract.ts';

export type WalkMode = 'measure' | 'review' | 'finish';

/**
 * Where the technician is in the run's steps. Main's judgement says which step comes next (or
 * where a stop ended the run); the technician may open a step already run to see its result and
 * repeat it. Nothing here judges a step.
 */
export function useWalk(detail: RunDetail | null) {
  const [selected, setSelected] = useState<string | null>(null);
  const [repeating, setRepeating] = useState(false);
  const judgement = detail?.judgement ?? null;
  const resultCount = detail?.stepResults.length ?? 0;
  const runId = detail?.run.id ?? null;

  // A new result (the repeat recorded) or another unit: back to where main says the run stands.
  useEffect(() => {
    setSelected(null);
    setRepeating(false);
  }, [resultCount, runId]);

  let current: string | null = null;
  let mode: WalkMode = 'finish';
  if (judgement && !detail?.run.finishedAt) {
    if (selected !== null) {
      current = selected;
      mode = repeating ? 'measure' : 'review';
    } else if (judgement.nextStepId !== null) {
      current = judgement.nextStepId;
      mode = 'measure';
    } else if (judgement.stoppedAt !== null) {
      // The step that stopped the run: its result, with Repeat or Finish as FAIL only.
      current = judgement.stoppedAt;
      mode = 'review';
    }
  }

  return {
    current,
    mode,
    /** Opens a step to see its result (and offer Repeat); the current one again closes it. */
    select(stepId: string | null) {
      setSelected(stepId === judgement?.nextStepId ? null : stepId);
      setRepeating(false);
    },
    repeat(stepId: string) {
      setSelected(stepId);
      setRepeating(true);
    },
    back() {
      setSelected(null);
      setRepeating(false);
    },
  };
}
