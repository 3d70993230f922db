// Synthetic test signals whose construction gives the expected values.

export interface TonePartial {
  order: number;
  /** Amplitude relative to the fundamental, dBc. */
  levelDbc: number;
  /** Phase of this partial in A·cos(2πnft + φ), degrees. */
  phaseDeg: number;
}

/** Fundamental of peak `amplitude` at `frequencyHz` with phase `phaseDeg`, plus harmonics. */
export function tone(
  length: number,
  sampleRateHz: number,
  frequencyHz: number,
  amplitude: number,
  { phaseDeg = 0, partials = [] as TonePartial[], startSample = 0 } = {},
): Float64Array {
  const out = new Float64Array(length);
  const w = (2 * Math.PI * frequencyHz) / sampleRateHz;
  const phase1 = (phaseDeg * Math.PI) / 180;
  for (let i = 0; i < length; i++) {
    const n = i + startSample;
    let x = amplitude * Math.cos(w * n + phase1);
    for (const p of partials) {
      x += amplitude * 10 ** (p.levelDbc / 20) * Math.cos(p.order * w * n + (p.phaseDeg * Math.PI) / 180);
    }
    out[i] = x;
  }
  return out;
}

export const dbc = (ratio: number) => 20 * Math.log10(ratio);

/**
 * Equivalent noise bandwidth of a cosine-sum window w[n] = Σ (−1)^k a_k cos(2πkn/N), in bins:
 * Harris 1978's ENBW = N·Σw²/(Σw)². Over whole periods the cosines are orthogonal, so Σw = N·a₀ and
 * Σw² = N·(a₀² + ½·Σ_{k≥1} a_k²), which gives (a₀² + ½·Σ_{k≥1} a_k²)/a₀² (about 1.5 for Hann).
 */
export function enbwBinsOfCosineSum(coefficients: readonly number[]): number {
  const [a0, ...rest] = coefficients;
  return (a0 * a0 + 0.5 * rest.reduce((sum, a) => sum + a * a, 0)) / (a0 * a0);
}

/**
 * The level (dBFS of a sine, AES17) that stands `marginDb` above white noise of variance σ² in a
 * bandwidth of `enbwBins` bins of an N-sample frame: the noise's one-sided density is σ²/(fs/2)
 * per Hz and a bin is fs/N wide, so the band holds σ²·2·ENBW/N of mean square; a full-scale sine's
 * mean square is ½.
 */
export function levelAboveWhiteNoiseDbfs(variance: number, frameSize: number, enbwBins: number, marginDb: number): number {
  const inBand = (variance * 2 * enbwBins) / frameSize;
  return 10 * Math.log10((inBand * 10 ** (marginDb / 10)) / 0.5);
}

/** 10·log10 of the mean of |A(f)|² over white noise in [low, high] Hz: the IEC 61672-1 A-weighting (its analytic form, with the +2.00 dB normalisation at 1 kHz). */
export function aWeightedWhiteNoiseDb(lowHz: number, highHz: number): number {
  const weight = (f: number) => {
    const f2 = f * f;
    const ra = (12194 ** 2 * f2 * f2) / ((f2 + 20.6 ** 2) * Math.sqrt((f2 + 107.7 ** 2) * (f2 + 737.9 ** 2)) * (f2 + 12194 ** 2));
    return (ra * 10 ** (2.0 / 20)) ** 2;
  };
  let sum = 0;
  const steps = 20000;
  for (let i = 0; i < steps; i++) sum += weight(lowHz + ((i + 0.5) * (highHz - lowHz)) / steps);
  return 10 * Math.log10(sum / steps);
}
