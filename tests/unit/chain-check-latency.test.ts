import FFT from 'fft.js';
import { describe, expect, it } from 'vitest';
import { estimateLatency, latencyStimulus } from '../../shared/calibration/latency.ts';
import { gaussian, seededRandom } from '../support/random.ts';

const RATE = 48000;

function rms(x: ArrayLike<number>): number {
  let sum = 0;
  for (let i = 0; i < x.length; i++) sum += x[i] * x[i];
  return Math.sqrt(sum / x.length);
}

/** A loopback by construction: silence for `delay` samples, then gain × the stimulus, plus white noise `noiseDb` below the delayed stimulus's RMS. */
function loopback(stimulus: Float32Array, delay: number, gain: number, noiseDb: number, seed: number, tail = 4800): Float32Array {
  const out = new Float32Array(delay + stimulus.length + tail);
  const sigma = rms(stimulus) * Math.abs(gain) * 10 ** (noiseDb / 20);
  const noise = gaussian(seededRandom(seed));
  for (let i = 0; i < out.length; i++) out[i] = sigma * noise();
  for (let i = 0; i < stimulus.length; i++) out[delay + i] += gain * stimulus[i];
  return out;
}

describe('latency stimulus', () => {
  it('is seeded: the same seed gives the same samples, another seed others', () => {
    const a = latencyStimulus({ sampleRateHz: RATE, seed: 7 });
    const b = latencyStimulus({ sampleRateHz: RATE, seed: 7 });
    const c = latencyStimulus({ sampleRateHz: RATE, seed: 8 });
    expect(a).toEqual(b);
    expect(a).not.toEqual(c);
  });

  it('lasts the asked time and peaks at the asked level (0 dBFS = peak 1, AES17)', () => {
    const s = latencyStimulus({ sampleRateHz: RATE, durationS: 0.25, peakDbfs: -6 });
    expect(s.length).toBe(12000);
    const peak = s.reduce((m, x) => Math.max(m, Math.abs(x)), 0);
    expect(peak).toBeCloseTo(10 ** (-6 / 20), 6);
  });

  it('keeps its energy in the 100 Hz–10 kHz band (over 99.9 % of it, by its own spectrum)', () => {
    const s = latencyStimulus({ sampleRateHz: RATE, durationS: 16384 / RATE });
    const fft = new FFT(16384);
    const spectrum = fft.createComplexArray();
    fft.realTransform(spectrum, Array.from(s));
    let inside = 0;
    let total = 0;
    for (let k = 1; k < 8192; k++) {
      const power = spectrum[2 * k] ** 2 + spectrum[2 * k + 1] ** 2;
      const f = (k * RATE) / 16384;
      total += power;
      if (f >= 100 && f <= 10000) inside += power;
    }
    expect(inside / total).toBeGreaterThan(0.999);
  });
});

describe('estimateLatency', () => {
  it.each([
    [1234, 0.3],
    [0, 0.3],
    [4801, 0.3],
    [777, -0.3],
  ])('finds a delay of exactly %i samples (gain %s, noise 20 dB below the stimulus)', (delay, gain) => {
    const stimulus = latencyStimulus({ sampleRateHz: RATE, seed: 3 });
    const captured = loopback(stimulus, delay, gain, -20, 11);
    const outcome = estimateLatency(stimulus, captured, RATE);
    expect(outcome.reason).toBeNull();
    expect(outcome.estimate?.latencySamples).toBe(delay);
    expect(outcome.estimate?.latencyMs).toBeCloseTo((delay / RATE) * 1000, 9);
    expect(outcome.estimate?.inverted).toBe(gain < 0);
    expect(outcome.confidence).toBeGreaterThan(4);
  });

  it('finds the delay at 44.1 kHz too, with the default stimulus', () => {
    const stimulus = latencyStimulus({ sampleRateHz: 44100 });
    const outcome = estimateLatency(stimulus, loopback(stimulus, 2047, 0.3, -20, 5), 44100);
    expect(outcome.estimate?.latencySamples).toBe(2047);
  });

  it('refuses a capture of noise alone (no stimulus in it) as not matching, with what to check', () => {
    const stimulus = latencyStimulus({ sampleRateHz: RATE, seed: 3 });
    const noise = gaussian(seededRandom(99));
    const captured = Float32Array.from({ length: stimulus.length + 9600 }, () => 0.01 * noise());
    const outcome = estimateLatency(stimulus, captured, RATE);
    expect(outcome.estimate).toBeNull();
    expect(outcome.reason).toMatch(/does not match the stimulus/);
    expect(outcome.reason).toMatch(/cabled/);
    expect(outcome.confidence).toBeLessThan(4);
  });

  it('refuses a silent capture and one shorter than the stimulus', () => {
    const stimulus = latencyStimulus({ sampleRateHz: RATE });
    expect(estimateLatency(stimulus, new Float32Array(stimulus.length + 100), RATE).reason).toMatch(/silent/);
    expect(estimateLatency(stimulus, stimulus.subarray(0, 100), RATE).reason).toMatch(/fewer than/);
  });
});
