// Square-wave responses of a second-order system, built from the textbook step response, and a
// scope's 8-bit capture of them. Expected ringing figures come from the same textbook formulas
// (Ogata, Modern Control Engineering, the second-order system's transient response), never from
// the code under test.

import { gaussian, seededRandom } from './random.ts';
import { scopeCapture as sharedScopeCapture, scopeView as sharedScopeView, stepResponse, type ScopeCapture as SharedScopeCapture, type SecondOrder } from '../../shared/sim/second-order.ts';

// The step response and the square-wave superposition are the shared ones (shared/sim/second-order.ts,
// the textbook formulas as written there); the figures below are the textbook's closed forms.
export { squareWaveResponse, stepResponse, type SecondOrder, type SquareWaveRecord } from '../../shared/sim/second-order.ts';

/** Overshoot as a fraction of the step: exp(−ζπ/√(1−ζ²)) (Ogata). */
export const textbookOvershoot = (zeta: number) => Math.exp((-zeta * Math.PI) / Math.sqrt(1 - zeta * zeta));
/** The damped (ringing) frequency fd = fn·√(1−ζ²) (Ogata). */
export const textbookRingHz = ({ zeta, naturalHz }: SecondOrder) => naturalHz * Math.sqrt(1 - zeta * zeta);
/** The logarithmic decrement over one period, δ = 2πζ/√(1−ζ²) (Ogata). */
export const textbookLogDecrement = (zeta: number) => (2 * Math.PI * zeta) / Math.sqrt(1 - zeta * zeta);

/** The first time the step response reaches `level`, by a scan and bisection on the formula. */
export function timeToReach(system: SecondOrder, level: number): number {
  // A fine scan forward first: a ringing response reaches the level several times.
  const fine = 1 / (2000 * system.naturalHz);
  let hi = fine;
  while (stepResponse(system, hi) < level) hi += fine;
  let lo = hi - fine;
  for (let k = 0; k < 200; k++) {
    const mid = (lo + hi) / 2;
    if (stepResponse(system, mid) < level) lo = mid;
    else hi = mid;
  }
  return (lo + hi) / 2;
}

/**
 * The textbook settling time measured from the 50 % instant: the time after which |y − 1| stays
 * within `band`, found on the formula by a fine scan backwards from far beyond and bisection, less
 * the time y takes to reach 0.5.
 */
export function settlingFromFormula(system: SecondOrder, band: number): number {
  const outside = (t: number) => Math.abs(stepResponse(system, t) - 1) > band;
  const fine = 1 / (2000 * system.naturalHz);
  let t = 200 / system.naturalHz;
  while (!outside(t)) t -= fine;
  let lo = t;
  let hi = t + fine;
  for (let k = 0; k < 200; k++) {
    const mid = (lo + hi) / 2;
    if (outside(mid)) lo = mid;
    else hi = mid;
  }
  return (lo + hi) / 2 - timeToReach(system, 0.5);
}

/** The extrema of y − 1 after the step, t = kπ/ωd (Ogata), as fractions of the step. */
export function textbookPeaks(system: SecondOrder, count: number): number[] {
  const wd = 2 * Math.PI * textbookRingHz(system);
  return Array.from({ length: count }, (_, k) => stepResponse(system, ((k + 1) * Math.PI) / wd) - 1);
}

/** A scope's usual view of a trace (shared/sim/second-order.ts), its noise seeded for the test. */
export function scopeView(clean: Float64Array, seed = 1, noiseCodes = 0.5): Float64Array {
  return sharedScopeView(clean, gaussian(seededRandom(seed)), noiseCodes);
}

/** What a scope's ADC keeps, its noise seeded for the test. */
export function scopeCapture(values: Float64Array, c: Omit<SharedScopeCapture, 'normal'> & { seed: number }): Float64Array {
  return sharedScopeCapture(values, { ...c, normal: gaussian(seededRandom(c.seed)) });
}
