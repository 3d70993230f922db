// Square-wave responses of a second-order system, built from the textbook step response, and a
// scope's 8-bit capture of them. Expected ringing figures come from the same textbook formulas
// (Ogata, Modern Control Engineering, the second-order system's transient response), never from
// the code under test.

import { gaussian, seededRandom } from './random.ts';
import { scopeCapture as sharedScopeCapture, scopeView as sharedScopeView, stepResponse, type ScopeCapture as SharedScopeCapture, type SecondOrder, type SquareWaveRecord } from '../../shared/sim/second-order.ts';

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

/**
 * The system's steady response to a square wave that holds only its odd harmonics below `topHz`, as
 * an audio interface plays it (nothing above half its sample rate): the square's Fourier series
 * (4/π)·Σ sin(kωt)/k over odd k, each term through the system's frequency response
 * H(jω) = ωn²/(ωn² − ω² + j2ζωnω) (Ogata), in gain and phase. Rising edges at firstEdgeS and every
 * period after it.
 */
export function bandLimitedSquareResponse(r: SquareWaveRecord, topHz: number): Float64Array {
  const terms: { k: number; gain: number; phase: number }[] = [];
  for (let k = 1; k * r.squareHz < topHz; k += 2) {
    const u = (k * r.squareHz) / r.system.naturalHz;
    const re = 1 - u * u;
    const im = 2 * r.system.zeta * u;
    terms.push({ k, gain: 4 / Math.PI / k / Math.hypot(re, im), phase: -Math.atan2(im, re) });
  }
  const mid = (r.highV + r.lowV) / 2;
  const half = (r.highV - r.lowV) / 2;
  const out = new Float64Array(r.samples);
  for (let i = 0; i < r.samples; i++) {
    const theta = 2 * Math.PI * r.squareHz * (i * r.sampleIntervalS - r.firstEdgeS);
    let y = 0;
    for (const { k, gain, phase } of terms) y += gain * Math.sin(k * theta + phase);
    out[i] = mid + half * y;
  }
  return out;
}
