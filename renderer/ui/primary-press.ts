// A step's primary action (Enter) and the impatient second press: the first press records a step
// and the walk moves on, so a second press a moment later lands on the next step's panel. There it
// must not start anything (a loud tone nobody asked for), so a press this soon after the last one,
// on whichever step, is taken as the same press.

/** Two presses of Enter closer than this are one impatient press (common practice for debouncing a double key press). */
export const DOUBLE_PRESS_MS = 500;
/** When the primary action was last pressed, on whichever step: the next step's panel sees the same time. */
let lastPrimaryAt = Number.NEGATIVE_INFINITY;

/** Notes this press; true when it follows the last one too closely to be a press of its own. */
export function secondPressTooSoon(): boolean {
  const now = performance.now();
  const tooSoon = now - lastPrimaryAt < DOUBLE_PRESS_MS;
  lastPrimaryAt = now;
  return tooSoon;
}
