// Round-trip latency of the loopback: play a known burst of noise once, capture it, and find the
// delay where the two line up by FFT cross-correlation. It runs once per chain check, so it
// allocates freely.

import { mulberry32 } from '../dsp/seeded-noise.ts';
import FFT from 'fft.js';
import { nextPowerOfTwo, realSpectrum } from '../dsp/fft-real.ts';
import { peakFromDbfs } from '../levels.ts';

export interface LatencyStimulusOptions {
  sampleRateHz: number;
  /** Length, seconds; by default 0.3 s. */
  durationS?: number;
  /** Same seed, same samples, so a stored check can be replayed. */
  seed?: number;
  /** Peak level, dBFS (noise peaks about 10 dB above its RMS); by default −12 dBFS. */
  peakDbfs?: number;
  /** Band, Hz; by default 100 Hz to 10 kHz or 0.4 × the sample rate, whichever is lower. */
  lowHz?: number;
  highHz?: number;
}

export const LATENCY_STIMULUS_DEFAULTS = { durationS: 0.3, seed: 1, peakDbfs: -12, lowHz: 100, highHz: 10000 } as const;

// The band stays above mains hum and the coupling capacitors' roll-off, where the chain is flat
// and a hum-laden input cannot correlate by chance, and below the converters' anti-alias
// transition band (0.4 × fs), where the chain's phase turns fast and would smear the peak.
const HIGH_FRACTION_OF_SAMPLE_RATE = 0.4;
// Raised-cosine fade at each end so the burst starts and stops without a click.
const FADE_S = 0.005;

/** Seeded, band-limited white noise: flat magnitude and random phase in the band, nothing outside it (before the fades). */
export function latencyStimulus(options: LatencyStimulusOptions): Float32Array {
  const { sampleRateHz } = options;
  const durationS = options.durationS ?? LATENCY_STIMULUS_DEFAULTS.durationS;
  const lowHz = options.lowHz ?? LATENCY_STIMULUS_DEFAULTS.lowHz;
  const highHz = Math.min(options.highHz ?? LATENCY_STIMULUS_DEFAULTS.highHz, HIGH_FRACTION_OF_SAMPLE_RATE * sampleRateHz);
  if (!(sampleRateHz > 0)) throw new RangeError(`sample rate must be a positive number of Hz, got ${sampleRateHz}`);
  if (!(durationS > 0)) throw new RangeError(`the stimulus must last more than 0 s, got ${durationS}`);
  if (!(lowHz > 0 && lowHz < highHz)) throw new RangeError(`the stimulus band must run upward from above 0 Hz, got ${lowHz}–${highHz} Hz`);
  const length = Math.round(durationS * sampleRateHz);
  const size = nextPowerOfTwo(length);
  const fft = new FFT(size);
  const spectrum: number[] = fft.createComplexArray();
  const random = mulberry32(options.seed ?? LATENCY_STIMULUS_DEFAULTS.seed);
  const binHz = sampleRateHz / size;
  const first = Math.ceil(lowHz / binHz);
  const last = Math.min(size / 2 - 1, Math.floor(highHz / binHz));
  for (let k = first; k <= last; k++) {
    const phase = 2 * Math.PI * random();
    // Bin k and its mirror N − k are conjugates, so the inverse transform is real.
    spectrum[2 * k] = Math.cos(phase);
    spectrum[2 * k + 1] = Math.sin(phase);
    spectrum[2 * (size - k)] = Math.cos(phase);
    spectrum[2 * (size - k) + 1] = -Math.sin(phase);
  }
  const time: number[] = fft.createComplexArray();
  fft.inverseTransform(time, spectrum);
  const out = new Float32Array(length);
  const fade = Math.min(Math.floor(length / 2), Math.round(FADE_S * sampleRateHz));
  let peak = 0;
  for (let i = 0; i < length; i++) {
    const edge = Math.min(i, length - 1 - i);
    const gain = edge < fade ? 0.5 - 0.5 * Math.cos((Math.PI * edge) / fade) : 1;
    out[i] = time[2 * i] * gain;
    peak = Math.max(peak, Math.abs(out[i]));
  }
  const scale = peakFromDbfs(options.peakDbfs ?? LATENCY_STIMULUS_DEFAULTS.peakDbfs) / peak;
  for (let i = 0; i < length; i++) out[i] *= scale;
  return out;
}

export interface LatencyOptions {
  /**
   * Least ratio of the correlation peak to the highest value outside ±exclusion around it. A
   * capture of the stimulus through a working loopback gives well over 10; noise alone about 1.
   */
  minConfidence?: number;
  /** Half-width of the peak's own lobe left out when looking for the next-highest, seconds. */
  exclusionS?: number;
  /** Longest delay searched, seconds; by default the whole capture. */
  maxLatencyS?: number;
}

export const LATENCY_DEFAULTS = { minConfidence: 4, exclusionS: 0.001 } as const;

/** Reported when nothing but the peak is above zero, so the figure stays finite (JSON has no infinity). */
export const MAX_CONFIDENCE = 1e6;

export interface LatencyEstimate {
  latencySamples: number;
  latencyMs: number;
  confidence: number;
  /** The capture came back with its polarity inverted (a miswired balanced lead). */
  inverted: boolean;
}

/** estimate null with a reason when the capture does not hold the stimulus clearly enough. */
export interface LatencyOutcome {
  estimate: LatencyEstimate | null;
  reason: string | null;
  /** Peak-to-next ratio, also when refused (0 when it could not be computed). */
  confidence: number;
}

/**
 * The delay of `played` inside `captured` (the capture starts when playback starts), whole
 * samples. The correlation is computed over non-negative delays only: a capture cannot lead its
 * own stimulus. The peak's sign is ignored for the delay and reported as `inverted`.
 */
export function estimateLatency(played: Float32Array, captured: Float32Array, sampleRateHz: number, options: LatencyOptions = {}): LatencyOutcome {
  const minConfidence = options.minConfidence ?? LATENCY_DEFAULTS.minConfidence;
  const refuse = (reason: string, confidence = 0): LatencyOutcome => ({ estimate: null, reason, confidence });
  if (!(sampleRateHz > 0)) throw new RangeError(`sample rate must be a positive number of Hz, got ${sampleRateHz}`);
  if (played.length === 0) return refuse('The latency stimulus is empty; make it with latencyStimulus().');
  if (captured.length < played.length) {
    return refuse(`The capture holds ${captured.length} samples, fewer than the ${played.length} of the stimulus; capture for longer than the stimulus plays.`);
  }
  for (const [name, samples] of [['stimulus', played], ['capture', captured]] as const) {
    const bad = samples.findIndex((x) => !Number.isFinite(x));
    if (bad >= 0) return refuse(`The ${name} holds a non-finite sample at ${bad}; capture again.`);
    if (samples.every((x) => x === 0)) return refuse(`The ${name} is silent; check that the output is looped to the input and the output is not muted.`);
  }

  const size = nextPowerOfTwo(played.length + captured.length);
  const fft = new FFT(size);
  const playedSpectrum = realSpectrum(fft, played);
  const capturedSpectrum = realSpectrum(fft, captured);
  // C = X_captured · conj(X_played): its inverse is c[k] = Σ captured[n + k]·played[n], lag k at index k.
  const product: number[] = fft.createComplexArray();
  for (let k = 0; k < size; k++) {
    const ar = capturedSpectrum[2 * k];
    const ai = capturedSpectrum[2 * k + 1];
    const br = playedSpectrum[2 * k];
    const bi = -playedSpectrum[2 * k + 1];
    product[2 * k] = ar * br - ai * bi;
    product[2 * k + 1] = ar * bi + ai * br;
  }
  const correlation: number[] = fft.createComplexArray();
  fft.inverseTransform(correlation, product);

  const maxLag = Math.min(captured.length - 1, options.maxLatencyS === undefined ? Infinity : Math.floor(options.maxLatencyS * sampleRateHz));
  let peakLag = 0;
  let peak = -1;
  for (let k = 0; k <= maxLag; k++) {
    const value = Math.abs(correlation[2 * k]);
    if (value > peak) {
      peak = value;
      peakLag = k;
    }
  }
  const exclusion = Math.max(1, Math.ceil((options.exclusionS ?? LATENCY_DEFAULTS.exclusionS) * sampleRateHz));
  let next = 0;
  for (let k = 0; k <= maxLag; k++) {
    if (Math.abs(k - peakLag) > exclusion) next = Math.max(next, Math.abs(correlation[2 * k]));
  }
  const confidence = next > 0 ? Math.min(MAX_CONFIDENCE, peak / next) : MAX_CONFIDENCE;
  if (!(confidence >= minConfidence)) {
    return refuse(
      `The capture does not match the stimulus (correlation peak only ${confidence.toFixed(1)} × the next, at least ${minConfidence} needed): ` +
        'check that the output is cabled to the input channel being captured and that the interface is connected.',
      confidence,
    );
  }
  return {
    estimate: { latencySamples: peakLag, latencyMs: (peakLag / sampleRateHz) * 1000, confidence, inverted: correlation[2 * peakLag] < 0 },
    reason: null,
    confidence,
  };
}
