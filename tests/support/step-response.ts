// Square-wave responses of a second-order system, built from the textbook step response, and a
// scope's 8-bit capture of them. Expected ringing figures come from the same textbook formulas
// (Ogata, Modern Control Engineering, the second-order system's transient response), never from
// the code under test.

import { gaussian, seededRandom } from './random.ts';

export interface SecondOrder {
  /** Damping ratio ζ. */
  zeta: number;
  /** Natural frequency fn = ωn/2π, Hz. */
  naturalHz: number;
}

/**
 * The unit step response at time t (0 before the step). Underdamped (Ogata):
 * y = 1 − e^{−ζωn t}(cos ωd t + ζ/√(1−ζ²) sin ωd t), ωd = ωn√(1−ζ²). Critically damped:
 * y = 1 − e^{−ωn t}(1 + ωn t). Overdamped, with s1,2 = ωn(ζ ± √(ζ²−1)):
 * y = 1 + ωn/(2√(ζ²−1))·(e^{−s1 t}/s1 − e^{−s2 t}/s2).
 */
export function stepResponse({ zeta, naturalHz }: SecondOrder, t: number): number {
  if (t <= 0) return 0;
  const wn = 2 * Math.PI * naturalHz;
  if (zeta < 1) {
    const root = Math.sqrt(1 - zeta * zeta);
    const wd = wn * root;
    return 1 - Math.exp(-zeta * wn * t) * (Math.cos(wd * t) + (zeta / root) * Math.sin(wd * t));
  }
  if (zeta === 1) return 1 - Math.exp(-wn * t) * (1 + wn * t);
  const root = Math.sqrt(zeta * zeta - 1);
  const s1 = wn * (zeta + root);
  const s2 = wn * (zeta - root);
  return 1 + (wn / (2 * root)) * (Math.exp(-s1 * t) / s1 - Math.exp(-s2 * t) / s2);
}

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

export interface SquareWaveRecord {
  system: SecondOrder;
  squareHz: number;
  sampleIntervalS: number;
  samples: number;
  lowV: number;
  highV: number;
  /** Time of the first (rising) edge of the generator's square wave, from the first sample. */
  firstEdgeS: number;
}

/** The system's response to a square wave, by superposition of step responses (linearity). */
export function squareWaveResponse(r: SquareWaveRecord): Float64Array {
  const out = new Float64Array(r.samples);
  const half = 1 / (2 * r.squareHz);
  const step = r.highV - r.lowV;
  for (let i = 0; i < r.samples; i++) {
    const t = i * r.sampleIntervalS;
    let y = r.lowV;
    for (let k = 0; r.firstEdgeS + k * half <= t; k++) {
      y += (k % 2 === 0 ? step : -step) * stepResponse(r.system, t - r.firstEdgeS - k * half);
    }
    out[i] = y;
  }
  return out;
}

export interface ScopeCapture {
  /** The screen's span in volts, which the ADC's codes cover; values beyond are clipped. */
  screenV: [number, number];
  bits: number;
  /** RMS noise added before quantisation, volts. */
  noiseV: number;
  seed: number;
}

/** What a scope's ADC keeps: noise added, rounded to 2^bits codes over the screen, clipped at its edges. */
export function scopeCapture(values: Float64Array, c: ScopeCapture): Float64Array {
  const normal = gaussian(seededRandom(c.seed));
  const codes = 2 ** c.bits;
  const lsb = (c.screenV[1] - c.screenV[0]) / codes;
  return values.map((v) => {
    const code = Math.round((v + c.noiseV * normal() - c.screenV[0]) / lsb);
    return c.screenV[0] + Math.min(codes - 1, Math.max(0, code)) * lsb;
  });
}

/** A scope's usual view of a trace: the screen 8 % wider than the trace each way, 8 bits, `noiseCodes` codes of noise. */
export function scopeView(clean: Float64Array, seed = 1, noiseCodes = 0.5): Float64Array {
  let min = Infinity;
  let max = -Infinity;
  for (const v of clean) {
    min = Math.min(min, v);
    max = Math.max(max, v);
  }
  const pad = 0.08 * (max - min);
  return scopeCapture(clean, { screenV: [min - pad, max + pad], bits: 8, noiseV: (noiseCodes * (max - min + 2 * pad)) / 256, seed });
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
