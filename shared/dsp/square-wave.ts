// A square wave that cannot alias: its Fourier series, (4/π)·Σ sin(n·x)/n over odd n (any
// textbook table of Fourier series), summed only over the odd harmonics below Nyquist. Every
// component is a sine at a frequency the sample rate can represent, so nothing folds back; a naive
// ±1 square sampled at the rate would hold every odd harmonic up to infinity, all folded into the
// audio band.
//
// Level: the square's flat top is the amplitude the level sets (a square at L dBFS has its top at
// 10^(L/20) of full scale, the same peak as a sine at L dBFS, so its RMS is 3 dB higher). The sum
// overshoots its flat top near each edge (Gibbs); its highest peak, over any number of harmonics,
// is that of the fundamental alone, 4/π of the top. So the top is held at or below π/4 of full
// scale (−2.1 dBFS): there the fundamental is itself a full-scale sine, and no sample ever exceeds
// full scale.

/** The highest square level: its fundamental (4/π of the top) then reaches full scale. */
export const SQUARE_MAX_LEVEL_DBFS = 20 * Math.log10(Math.PI / 4);

/**
 * At most this many odd harmonics are summed, so a sample costs a bounded amount of arithmetic in
 * the audio thread; only squares below fs/2048 (23 Hz at 48 kHz) are affected, and they lose their
 * top harmonics (a slower edge), never gain an alias.
 */
export const SQUARE_MAX_TERMS = 512;

/** The number of odd harmonics n·f strictly below Nyquist, capped at SQUARE_MAX_TERMS. */
export function squareTerms(frequencyHz: number, sampleRateHz: number): number {
  const ratio = sampleRateHz / (2 * frequencyHz);
  return Math.max(1, Math.min(SQUARE_MAX_TERMS, Math.ceil((ratio - 1) / 2)));
}

export class BandLimitedSquare {
  private readonly sampleRateHz: number;
  private readonly reciprocal = new Float64Array(SQUARE_MAX_TERMS);
  private terms = 1;

  constructor(sampleRateHz: number) {
    this.sampleRateHz = sampleRateHz;
    for (let k = 0; k < SQUARE_MAX_TERMS; k++) this.reciprocal[k] = 1 / (2 * k + 1);
  }

  setFrequency(frequencyHz: number): void {
    this.terms = squareTerms(frequencyHz, this.sampleRateHz);
  }

  /** The band-limited square of flat top 1 at phase x (radians); rises through 0 at x = 0. */
  at(x: number): number {
    // sin((2k+1)x) by the Chebyshev recurrence s_{k+1} = 2cos(2x)·s_k − s_{k−1}: one multiply-add
    // a harmonic instead of a sine each.
    const c = 2 * Math.cos(2 * x);
    let previous = -Math.sin(x);
    let current = -previous;
    let sum = current;
    for (let k = 1; k < this.terms; k++) {
      const next = c * current - previous;
      previous = current;
      current = next;
      sum += next * this.reciprocal[k];
    }
    return (4 / Math.PI) * sum;
  }
}
