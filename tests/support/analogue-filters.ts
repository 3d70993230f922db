// Analogue filters applied to a test signal exactly, in the frequency domain: the signal's DFT,
// zero-padded to at least twice its length, is multiplied bin by bin by the filter's analytic
// H(j2πf). That is the filter as the band-limited signal sees it, with no bilinear-transform
// warping or impulse-invariance aliasing, so the response a measurement should find is H(f) itself.
// What the method leaves is the circular wrap of the filter's tail past the padding, e^(−t/τ) after
// more than the signal's length: nothing at these time constants.

import FFT from 'fft.js';

export interface Complex {
  re: number;
  im: number;
}

export type AnalogueResponse = (frequencyHz: number) => Complex;

const divide = (a: Complex, b: Complex): Complex => {
  const d = b.re * b.re + b.im * b.im;
  return { re: (a.re * b.re + a.im * b.im) / d, im: (a.im * b.re - a.re * b.im) / d };
};

/** First-order RC low-pass: H = 1/(1 + j·f/fc), so |H| = 1/√(1 + (f/fc)²) and ∠H = −atan(f/fc) (any circuits textbook). */
export const rcLowPass = (cornerHz: number): AnalogueResponse => (f) => divide({ re: 1, im: 0 }, { re: 1, im: f / cornerHz });

/**
 * Second-order Butterworth high-pass: H(s) = s²/(s² + √2·ωc·s + ωc²), so |H|² = (f/fc)⁴/(1 + (f/fc)⁴)
 * (Butterworth's maximally flat form, any filter textbook).
 */
export const butterworthHighPass2 = (cornerHz: number): AnalogueResponse => (f) => {
  const x = f / cornerHz;
  return divide({ re: -x * x, im: 0 }, { re: 1 - x * x, im: Math.SQRT2 * x });
};

export const magnitude = (h: Complex) => Math.hypot(h.re, h.im);
export const phaseDeg = (h: Complex) => (Math.atan2(h.im, h.re) * 180) / Math.PI;

/** `samples` delayed by `delay` whole samples and filtered by `response`; `delay + samples.length` long. */
export function filtered(samples: ArrayLike<number>, sampleRateHz: number, response: AnalogueResponse, delay = 0): Float64Array {
  const length = samples.length + delay;
  const size = 2 ** Math.ceil(Math.log2(2 * length));
  const fft = new FFT(size);
  const input = new Float64Array(size);
  for (let i = 0; i < samples.length; i++) input[delay + i] = samples[i];
  const spectrum = new Float64Array(2 * size);
  fft.realTransform(spectrum, input);
  fft.completeSpectrum(spectrum);
  for (let k = 0; k <= size / 2; k++) {
    const h = response((k * sampleRateHz) / size);
    // DC and Nyquist bins of a real signal are real: keep them so, and mirror the rest as conjugates.
    const hIm = k === 0 || k === size / 2 ? 0 : h.im;
    const re = spectrum[2 * k] * h.re - spectrum[2 * k + 1] * hIm;
    const im = spectrum[2 * k] * hIm + spectrum[2 * k + 1] * h.re;
    spectrum[2 * k] = re;
    spectrum[2 * k + 1] = im;
    if (k > 0 && k < size / 2) {
      spectrum[2 * (size - k)] = re;
      spectrum[2 * (size - k) + 1] = -im;
    }
  }
  const out = new Float64Array(2 * size);
  fft.inverseTransform(out, spectrum);
  const result = new Float64Array(length);
  for (let i = 0; i < length; i++) result[i] = out[2 * i];
  return result;
}
