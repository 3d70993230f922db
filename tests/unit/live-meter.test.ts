import { describe, expect, it } from 'vitest';
import { FrameAnalyzer } from '../../shared/measurement/frame-analyzer.ts';
import { LiveMeter } from '../../shared/measurement/live-meter.ts';
import { createHarmonicAnalysis } from '../../shared/measurement/reading.ts';
import { TimestampContinuity } from '../../shared/capture/timestamp-continuity.ts';
import { tone } from '../support/signals.ts';

const RATE = 44100;
const BLOCK = 441; // Chromium's capture bridge moves 10 ms blocks: 441 samples at 44.1 kHz.
// 997 Hz (AES17's test frequency) is not a whole number of cycles per 10 ms, so a lost block
// jumps the phase — the case that corrupts a harmonic reading.
const F0 = 997;
const H3_DBC = -100;

function stream(seconds: number) {
  return Float32Array.from(tone(Math.round(seconds * RATE), RATE, F0, 0.5, { partials: [{ order: 3, levelDbc: H3_DBC, phaseDeg: 0 }] }));
}

/** Feeds `samples` in 10 ms blocks; returns the H3 level of every reading produced. */
function feed(meter: LiveMeter, samples: Float32Array): number[] {
  const h3: number[] = [];
  for (let at = 0; at + BLOCK <= samples.length; at += BLOCK) {
    if (meter.push(samples.subarray(at, at + BLOCK))) h3.push(meter.reading.harmonics.find((h) => h.order === 3)!.levelDbc);
  }
  return h3;
}

/** Feeds `samples` in 10 ms blocks, whatever they hold. */
function feed0(meter: LiveMeter, samples: Float32Array): void {
  for (let at = 0; at + BLOCK <= samples.length; at += BLOCK) meter.push(samples.subarray(at, at + BLOCK));
}

function withBlockLost(samples: Float32Array, atSeconds: number): Float32Array {
  const cut = Math.round(atSeconds * RATE);
  const out = new Float32Array(samples.length - BLOCK);
  out.set(samples.subarray(0, cut), 0);
  out.set(samples.subarray(cut + BLOCK), cut);
  return out;
}

function withZerosInserted(samples: Float32Array, atSeconds: number): Float32Array {
  const cut = Math.round(atSeconds * RATE);
  const out = new Float32Array(samples.length + BLOCK);
  out.set(samples.subarray(0, cut), 0);
  out.set(samples.subarray(cut), cut + BLOCK);
  return out;
}

describe('LiveMeter: never a reading across a capture discontinuity', () => {
  it('a frame with one lost block inside it really is corrupted (the hazard this guards)', () => {
    // Block lost at the middle of a 16384-sample frame, where the window weighs most.
    const broken = withBlockLost(stream(1), 8192 / RATE);
    const result = new FrameAnalyzer(16384, RATE).analyze(broken, createHarmonicAnalysis());
    expect(result.harmonics.find((h) => h.order === 3)!.levelDbc).toBeGreaterThan(H3_DBC + 10);
    // Clean, THD+N would be the −100 dBc H3 alone.
    expect(result.thdnDb).toBeGreaterThan(-60);
  });

  it('detects a lost block, counts it once, and keeps every reading clean', () => {
    const meter = new LiveMeter({ sampleRateHz: RATE, expectedFundamentalHz: F0 });
    const h3 = feed(meter, withBlockLost(stream(6), 2.5));
    expect(meter.discontinuities).toBe(1);
    expect(h3.length).toBeGreaterThan(20);
    for (const level of h3) expect(Math.abs(level - H3_DBC)).toBeLessThan(1);
  });

  it('detects an inserted block of zeros and counts it once', () => {
    const meter = new LiveMeter({ sampleRateHz: RATE, expectedFundamentalHz: F0 });
    const h3 = feed(meter, withZerosInserted(stream(6), 2.5));
    expect(meter.discontinuities).toBe(1);
    for (const level of h3) expect(Math.abs(level - H3_DBC)).toBeLessThan(1);
  });

  it('counts nothing on a clean stream and posts at least 5 readings per second', () => {
    const meter = new LiveMeter({ sampleRateHz: RATE, expectedFundamentalHz: F0 });
    const h3 = feed(meter, stream(4));
    expect(meter.discontinuities).toBe(0);
    // The first reading needs one full frame; after that one every hop.
    const seconds = 4 - meter.frameSize / RATE;
    expect(h3.length / seconds).toBeGreaterThanOrEqual(5);
  });

  it('settles on a steady tone and unsettles at a level step', () => {
    const meter = new LiveMeter({ sampleRateHz: RATE, expectedFundamentalHz: F0 });
    feed(meter, stream(2));
    expect(meter.reading.settled).toBe(true);
    meter.markBreak(false); // an intended stimulus change: not counted
    const louder = stream(0.5).map((x) => x * 1.5);
    feed(meter, louder);
    expect(meter.discontinuities).toBe(0);
    expect(meter.reading.settled).toBe(false);
  });

  it('with the generator off, settles on the noise summed over the band it was given', () => {
    // White Gaussian noise of σ = 10^(−80/20)/√2 full scale: −80 dBFS over the whole band up to
    // Nyquist (AES17: a full-scale sine, mean square 1/2, is 0 dBFS). Over 22 Hz–20 kHz of the
    // 22.05 kHz band the expected figure is −80 + 10·log10((20000 − 22)/22050) dB.
    const sigma = 10 ** (-80 / 20) / Math.SQRT2;
    let seed = 12345;
    const uniform = () => ((seed = (seed * 1103515245 + 12345) % 2 ** 31) + 0.5) / 2 ** 31;
    const noise = new Float32Array(RATE * 3);
    for (let i = 0; i < noise.length; i += 2) {
      const r = Math.sqrt(-2 * Math.log(uniform()));
      const a = 2 * Math.PI * uniform();
      noise[i] = sigma * r * Math.cos(a);
      noise[i + 1] = sigma * r * Math.sin(a);
    }
    const meter = new LiveMeter({ sampleRateHz: RATE, bandLowHz: 22, bandHighHz: 20000 });
    feed0(meter, noise);
    expect(meter.reading.flags).toContain('no-signal');
    expect(meter.reading.settled).toBe(true);
    expect(meter.reading.settleRemainingS).toBe(0);
    expect(meter.reading.bandHz).toEqual({ lowHz: 22, highHz: 20000 });
    expect(meter.reading.noiseDbfs).toBeCloseTo(-80 + 10 * Math.log10((20000 - 22) / (RATE / 2)), 0);
  });

  it('works from a 14 Hz trim tone, whose frames are long', () => {
    const meter = new LiveMeter({ sampleRateHz: RATE, expectedFundamentalHz: 14 });
    const samples = Float32Array.from(tone(RATE * 5, RATE, 14, 0.3, { partials: [{ order: 3, levelDbc: -66, phaseDeg: 20 }] }));
    const h3 = feed(meter, samples);
    expect(h3.length).toBeGreaterThan(5);
    expect(Math.abs(h3.at(-1)! + 66)).toBeLessThan(0.2);
  });
});

describe('TimestampContinuity', () => {
  it('passes contiguous 10 ms blocks with jitter and flags a dropped one', () => {
    const continuity = new TimestampContinuity();
    const blockUs = (BLOCK / RATE) * 1e6;
    expect(continuity.isGap(0, BLOCK, RATE)).toBe(false);
    expect(continuity.isGap(blockUs + 300, BLOCK, RATE)).toBe(false); // 0.3 ms jitter
    expect(continuity.isGap(2 * blockUs, BLOCK, RATE)).toBe(false);
    expect(continuity.isGap(4 * blockUs, BLOCK, RATE)).toBe(true); // block 3 missing
    expect(continuity.isGap(5 * blockUs, BLOCK, RATE)).toBe(false);
  });
});
