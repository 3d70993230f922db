import { describe, expect, it } from 'vitest';
import { SineSource, STIMULUS_RAMP_S } from '../../shared/dsp/sine-source.ts';

const RATE = 48000;

function render(source: SineSource, frames: number): Float32Array {
  const out = new Float32Array(frames);
  for (let at = 0; at < frames; at += 128) source.fill(out.subarray(at, Math.min(frames, at + 128)));
  return out;
}

const peak = (x: Float32Array) => x.reduce((m, v) => Math.max(m, Math.abs(v)), 0);

describe('SineSource (the stimulus)', () => {
  it('produces the set level: −6 dBFS is a peak of 10^(−6/20) (AES17: full-scale sine = 0 dBFS)', () => {
    const source = new SineSource(RATE);
    source.set({ frequencyHz: 1000, levelDbfs: -6, on: true });
    const steady = render(source, RATE).subarray(RATE / 2);
    // 1 kHz at 48 kHz samples the crest exactly every 48 samples.
    expect(peak(steady)).toBeCloseTo(10 ** (-6 / 20), 5);
  });

  it('never exceeds full scale, whatever level is asked for', () => {
    const source = new SineSource(RATE);
    source.set({ frequencyHz: 1000, levelDbfs: 6, on: true });
    expect(peak(render(source, RATE))).toBeLessThanOrEqual(1);
  });

  it('ramps in and out over 20 ms (about 960 samples at 48 kHz), with no step', () => {
    const source = new SineSource(RATE);
    source.set({ frequencyHz: 1000, levelDbfs: 0, on: true });
    const rampSamples = STIMULUS_RAMP_S * RATE;
    render(source, rampSamples - 48);
    expect(source.currentGain).toBeLessThan(1);
    expect(source.currentGain).toBeGreaterThan(0.9);
    render(source, 48);
    expect(source.currentGain).toBe(1);
    source.set({ frequencyHz: 1000, levelDbfs: 0, on: false });
    const fadeOut = render(source, rampSamples + 10);
    expect(source.currentGain).toBe(0);
    expect(peak(fadeOut.subarray(rampSamples))).toBe(0);
  });

  it('keeps the phase running through a frequency change (no jump between samples)', () => {
    const source = new SineSource(RATE);
    source.set({ frequencyHz: 997, levelDbfs: 0, on: true });
    const before = render(source, 2000);
    source.set({ frequencyHz: 14, levelDbfs: 0, on: true });
    const after = render(source, 2000);
    const joined = new Float32Array([...before, ...after]);
    // A sine of peak 1 at f moves at most 2π·f/fs per sample; allow the higher frequency's bound.
    const bound = (2 * Math.PI * 997) / RATE;
    for (let i = 1; i < joined.length; i++) expect(Math.abs(joined[i] - joined[i - 1])).toBeLessThanOrEqual(bound * 1.0001);
  });
});
