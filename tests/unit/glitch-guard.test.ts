// The capture discontinuity guard: quiet on clean signals of every kind a bench meets, and it
// finds a lost 10 ms block (441 samples at 44.1 kHz, the size Chromium's capture bridge drops).

import { describe, expect, it } from 'vitest';
import { GlitchGuard } from '../../shared/capture/glitch-guard.ts';
import { LiveMeter } from '../../shared/measurement/live-meter.ts';
import { planTestFrequency } from '../../shared/measurement/frequency-planner.ts';
import { gaussian, seededRandom } from '../support/random.ts';
import { tone } from '../support/signals.ts';

const RATE = 44100;

function signal(frequencyHz: number, seconds: number, noise = 1e-5) {
  const random = gaussian(seededRandom(Math.round(frequencyHz)));
  return Float32Array.from(
    tone(Math.round(seconds * RATE), RATE, frequencyHz, 0.4, {
      partials: [
        { order: 2, levelDbc: -60, phaseDeg: 10 },
        { order: 3, levelDbc: -50, phaseDeg: 70 },
      ],
    }),
    (x) => x + noise * random(),
  );
}

function scan(guard: GlitchGuard, samples: Float32Array): number {
  for (let at = 0; at + 441 <= samples.length; at += 441) guard.scan(samples.subarray(at, at + 441), 441);
  return guard.count;
}

describe('GlitchGuard', () => {
  it.each([14, 20, 997, 5000, 10000])('stays quiet on 30 s of a clean %i Hz tone with harmonics and noise', (frequencyHz) => {
    const guard = new GlitchGuard(RATE);
    guard.setToneHz(frequencyHz);
    expect(scan(guard, signal(frequencyHz, 30))).toBe(0);
  });

  // Not 5000 Hz: 441 samples hold exactly 50 of its cycles, so losing them leaves no seam at all.
  it.each([14, 997, 5003])('finds one lost 10 ms block in a %i Hz tone', (frequencyHz) => {
    const clean = signal(frequencyHz, 4);
    const cut = 2 * RATE + 123;
    const broken = new Float32Array(clean.length - 441);
    broken.set(clean.subarray(0, cut), 0);
    broken.set(clean.subarray(cut + 441), cut);
    const guard = new GlitchGuard(RATE);
    guard.setToneHz(frequencyHz);
    expect(scan(guard, broken)).toBe(1);
  });

  it('is quiet on silence and on noise alone', () => {
    const random = gaussian(seededRandom(5));
    const guard = new GlitchGuard(RATE);
    expect(scan(guard, new Float32Array(RATE * 5))).toBe(0);
    expect(scan(guard, Float32Array.from({ length: RATE * 5 }, () => 1e-3 * random()))).toBe(0);
  });
});

describe('LiveMeter with the stimulus on the interface clock', () => {
  it('analyses coherently and averages noise down, keeping the harmonics', () => {
    // A planned frequency fits whole cycles in the frame, so frames lock to the stimulus.
    const plan = planTestFrequency({ targetHz: 1000, sampleRateHz: RATE, mainsHz: 50, harmonicCount: 10, frameSize: 8192 });
    const make = (stimulusLocked: boolean) =>
      new LiveMeter({ sampleRateHz: RATE, expectedFundamentalHz: plan.frequencyHz, stimulusLocked, synchronousAverages: 8 });
    const samples = signal(plan.frequencyHz, 4, 1e-3);
    const run = (meter: LiveMeter) => {
      for (let at = 0; at + 441 <= samples.length; at += 441) meter.push(samples.subarray(at, at + 441));
      return meter.reading;
    };
    const locked = run(make(true));
    const free = run(make(false));
    expect(locked.mode).toBe('coherent');
    expect(free.mode).toBe('windowed');
    expect(Math.abs(locked.harmonics[1].levelDbc + 50)).toBeLessThan(0.2);
    // Eight locked frames: noise down about 10·log10(8) = 9 dB.
    expect(free.noiseDbfs - locked.noiseDbfs).toBeGreaterThan(7);
  });
});
