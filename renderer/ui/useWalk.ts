import { useEffect, useRef, useState } from 'react';
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
  /** A step whose result is worth seeing before going on (a response's plot): opened once it is recorded. */
  const reviewNext = useRef<string | null>(null);
  const [justRecorded, setJustRecorded] = useState<string | null>(null);
  const judgement = detail?.judgement ?? null;
  const resultCount = detail?.stepResults.length ?? 0;
  const runId = detail?.run.id ?? null;

  // A new result (the repeat recorded) or another unit: back to where main says the run stands.
  useEffect(() => {
    const review = reviewNext.current !== null && detail?.stepResults.at(-1)?.stepId === reviewNext.current ? reviewNext.current : null;
    reviewNext.current = null;
    setSelected(review);
    setJustRecorded(review);
    setRepeating(false);
  }, [resultCount, runId]); // eslint-disable-line react-hooks/exhaustive-deps

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
    /** The step shown for review right after it was recorded (its primary action is then to go on), or null. */
    justRecorded: selected !== null && selected === justRecorded ? justRecorded : null,
    /** Opens a step to see its result (and offer Repeat); the current one again closes it. */
    select(stepId: string | null) {
      setSelected(stepId === judgement?.nextStepId ? null : stepId);
      setRepeating(false);
      setJustRecorded(null);
    },
    repeat(stepId: string) {
      setSelected(stepId);
      setRepeating(true);
      setJustRecorded(null);
    },
    back() {
      setSelected(null);
      setRepeating(false);
      setJustRecorded(null);
    },
    /** Once this step's result is recorded, show it before going on. */
    showAfterRecording(stepId: string) {
      reviewNext.current = stepId;
    },
  };
}
