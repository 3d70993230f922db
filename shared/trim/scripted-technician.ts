// A technician who follows the trim assistant exactly, as a rule: start at the safe end, record a
// point wherever the assistant says to record next, and leave the trimmer at the recommended
// setting once that recommendation holds still from one point to the next. The simulated
// populations (tests/support/trim-population.ts) and the headless demo line both walk it, so
// "follows the advice" means the same thing in both.

import type { TrimAdvice } from './trim-assistant.ts';

export type TechnicianMove =
  /** Record the next point here. */
  | { kind: 'record-at'; position: number }
  /** The recommendation held: leave the trimmer here (the final setting). */
  | { kind: 'leave-at'; position: number }
  /** No recommendation held within the technician's patience: stop trimming as it stands. */
  | { kind: 'give-up' };

export interface TechnicianHabits {
  positionStep: number;
  /** The technician stops after this many points. */
  pointCap: number;
}

/**
 * What the technician does after a point, from the advice after it and the recommendation shown
 * after the point before (null when there was none). A recommendation holds when it moved by no
 * more than a quarter step, the finest the assistant's grid moves it.
 */
export function nextMove(
  advice: Pick<TrimAdvice, 'recommendedPosition' | 'nextPosition'>,
  previousRecommendation: number | null,
  pointsSoFar: number,
  habits: TechnicianHabits,
): TechnicianMove {
  const recommended = advice.recommendedPosition;
  if (recommended !== null && previousRecommendation !== null && Math.abs(recommended - previousRecommendation) <= habits.positionStep / 4) {
    return { kind: 'leave-at', position: recommended };
  }
  if (pointsSoFar >= habits.pointCap) return { kind: 'give-up' };
  return { kind: 'record-at', position: advice.nextPosition };
}
