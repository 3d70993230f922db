// Helpers around fft.js for the offline analyses that transform a whole recording at once
// (latency, sweep deconvolution). They allocate: they run once per measurement, never per frame.

import FFT from 'fft.js';

export function nextPowerOfTwo(n: number): number {
  return 2 ** Math.ceil(Math.log2(Math.max(2, n)));
}

/** The full complex spectrum (re, im interleaved) of real samples zero-padded to fft.size. */
export function realSpectrum(fft: FFT, samples: ArrayLike<number>): Float64Array {
  const input = new Float64Array(fft.size);
  input.set(samples);
  const out = new Float64Array(2 * fft.size);
  fft.realTransform(out, input);
  fft.completeSpectrum(out);
  return out;
}
