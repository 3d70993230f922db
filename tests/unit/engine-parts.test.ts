// The smaller parts of the measurement engine, each against an outside reference.

import { describe, expect, it } from 'vitest';
import FFT from 'fft.js';
// A second, independent FFT from the npm registry (fft-js 0.0.12, recursive Cooley–Tukey).
import * as fftJs from 'fft-js';
import { fitSine3, fitSine4 } from '../../shared/dsp/sine-fit.ts';
import { analogueLevel, DBU_REFERENCE_VRMS } from '../../shared/levels.ts';
import { FrameAnalyzer } from '../../shared/measurement/frame-analyzer.ts';
import { NoCoherentFrequency, planTestFrequency } from '../../shared/measurement/frequency-planner.ts';
import { createHarmonicAnalysis } from '../../shared/measurement/reading.ts';
import { SubAudioMeter } from '../../shared/measurement/sub-audio.ts';
import { averageLockedFrames } from '../../shared/measurement/synchronous-average.ts';
import { gaussian, seededRandom } from '../support/random.ts';
import { tone } from '../support/signals.ts';

describe('fft.js against a second FFT library', () => {
  it.each([64, 1024, 4096])('agrees with fft-js on random data (N = %i) to 1e-9 relative', (n) => {
    const random = seededRandom(n);
    const input = Array.from({ length: n }, () => 2 * random() - 1);
    const fast = new FFT(n);
    const out = fast.createComplexArray();
    fast.realTransform(out, input);
    fast.completeSpectrum(out);
    const reference = fftJs.fft(input);
    let scale = 0;
    for (const [re, im] of reference) scale = Math.max(scale, Math.hypot(re, im));
    for (let k = 0; k < n; k++) {
      expect(Math.abs(out[2 * k] - reference[k][0]) / scale).toBeLessThan(1e-9);
      expect(Math.abs(out[2 * k + 1] - reference[k][1]) / scale).toBeLessThan(1e-9);
    }
  });
});

describe('sine fits (IEEE Std 1241, three- and four-parameter methods)', () => {
  // A synthetic record: A·cos(2πft + φ) + C plus white noise of known σ.
  const rate = 48000;
  const amplitude = 0.7;
  const frequencyHz = 997.31;
  const phase = 0.9;
  const offset = 0.01;
  const sigma = 1e-3;
  const random = gaussian(seededRandom(42));
  const record = Float64Array.from(
    { length: 48000 },
    (_, n) => amplitude * Math.cos((2 * Math.PI * frequencyHz * n) / rate + phase) + offset + sigma * random(),
  );

  it('four-parameter fit finds frequency, amplitude, phase and offset from a rough start', () => {
    const fit = fitSine4(record, rate, 997.2);
    expect(fit.frequencyHz).toBeCloseTo(frequencyHz, 4);
    expect(fit.amplitude).toBeCloseTo(amplitude, 4);
    expect(fit.phaseRad).toBeCloseTo(phase, 3);
    expect(fit.offset).toBeCloseTo(offset, 4);
    // IEEE 1241: the residual's RMS estimates the record's noise.
    expect(fit.residualRms / sigma).toBeGreaterThan(0.98);
    expect(fit.residualRms / sigma).toBeLessThan(1.02);
  });

  it('three-parameter fit at the known frequency agrees', () => {
    const fit = fitSine3(record, rate, frequencyHz);
    expect(fit.amplitude).toBeCloseTo(amplitude, 4);
    expect(fit.phaseRad).toBeCloseTo(phase, 3);
  });
});

describe('synchronous averaging', () => {
  it('keeps locked harmonics and lowers unlocked noise by about 10·log10(frames) dB', () => {
    const rate = 48000;
    const frame = 16384;
    const frames = 16;
    // 341 whole cycles per frame: coherent, and locked from frame to frame.
    const cycles = 341;
    const f = (cycles * rate) / frame;
    const random = gaussian(seededRandom(9));
    const stream = tone(frame * frames, rate, f, 0.5, { partials: [{ order: 3, levelDbc: -80, phaseDeg: 0 }] }).map(
      (x) => x + 1e-4 * random(),
    );
    const analyzer = new FrameAnalyzer(frame, rate);
    const single = analyzer.analyze(stream.subarray(stream.length - frame), createHarmonicAnalysis(), f);
    const singleNoise = single.noiseDbfs;
    const averaged = averageLockedFrames(stream, stream.length, frame, frames, new Float64Array(frame));
    const result = new FrameAnalyzer(frame, rate).analyze(averaged, createHarmonicAnalysis(), f);
    expect(result.mode).toBe('coherent');
    expect(Math.abs(result.harmonics[1].levelDbc + 80)).toBeLessThan(0.2);
    expect(Math.abs(singleNoise - result.noiseDbfs - 10 * Math.log10(frames))).toBeLessThan(1);
  });
});

describe('sub-audio activity', () => {
  it('sees a 3 Hz wander beside a 14 Hz tone at its level, and nothing without it', () => {
    const rate = 48000;
    const seconds = 8;
    const clean = tone(rate * seconds, rate, 14, 0.5);
    // A 3 Hz component at −50 dBFS: sine peak 10^(−50/20).
    const wander = tone(rate * seconds, rate, 3, 10 ** (-50 / 20));
    const withWander = clean.map((x, i) => x + wander[i]);
    const measure = (samples: Float64Array) => {
      const meter = new SubAudioMeter(rate, 14);
      meter.push(samples, samples.length);
      return meter.levelDbfs();
    };
    expect(Math.abs(measure(withWander)! - -50)).toBeLessThan(0.5);
    expect(measure(clean)!).toBeLessThan(-100);
  });
});

describe('level conversion', () => {
  it('0 dBu is √0.6 V RMS and dBV is relative to 1 V RMS (common to broadcast and pro-audio practice)', () => {
    expect(DBU_REFERENCE_VRMS).toBeCloseTo(0.7746, 4);
    const level = analogueLevel(-20, { dbuAtFullScale: 24 });
    expect(level.dbu).toBeCloseTo(4, 10);
    expect(level.vRms).toBeCloseTo(0.7746 * 10 ** (4 / 20), 3);
    // dBV = dBu − 2.218 dB (20·log10 0.7746).
    expect(level.dbv).toBeCloseTo(4 - 2.218, 2);
  });
});

describe('frequency planner', () => {
  it('moves a 10 Hz tone off 50 Hz mains (its H5 would sit on mains) to a coherent, clear frequency', () => {
    const plan = planTestFrequency({ targetHz: 10, sampleRateHz: 48000, mainsHz: 50, harmonicCount: 10, maxOffsetHz: 2 });
    const binHz = 48000 / plan.frameSize;
    expect(plan.cycles % 2).toBe(1);
    expect(plan.frequencyHz).toBeCloseTo(plan.cycles * binHz, 9);
    // Every counted harmonic at least 3 bins from 50 Hz and its multiples (checked here by brute force).
    for (let order = 1; order <= 10; order++) {
      for (let multiple = 1; multiple <= 10; multiple++) {
        expect(Math.abs(order * plan.frequencyHz - multiple * 50)).toBeGreaterThanOrEqual(3 * binHz - 1e-9);
      }
    }
    expect(plan.closestMainsHz).toBeGreaterThanOrEqual(3 * binHz - 1e-9);
    expect(Math.abs(plan.frequencyHz - 10)).toBeLessThan(2);
    expect(plan.reason).toMatch(/whole cycles/);
  });

  it('keeps a frequency that is already clear, snapped to whole cycles', () => {
    const plan = planTestFrequency({ targetHz: 1000, sampleRateHz: 48000, mainsHz: 60, harmonicCount: 10, frameSize: 65536 });
    expect(Math.abs(plan.frequencyHz - 1000)).toBeLessThan(48000 / 65536);
  });

  // The design's own statement of the tolerance: at most 1 % of the procedure's frequency by default.
  for (const sampleRateHz of [44100, 48000]) {
    for (const mainsHz of [50, 60] as const) {
      it(`14 Hz at ${sampleRateHz} Hz, ${mainsHz} Hz mains: within 0.14 Hz (1 %) and clear of mains, or refused`, () => {
        let plan;
        try {
          plan = planTestFrequency({ targetHz: 14, sampleRateHz, mainsHz, harmonicCount: 10 });
        } catch (error) {
          expect(error).toBeInstanceOf(NoCoherentFrequency);
          expect((error as Error).message).toMatch(/use 14 Hz itself, analysed windowed/);
          return;
        }
        expect(Math.abs(plan.frequencyHz - 14)).toBeLessThanOrEqual(0.14);
        const binHz = sampleRateHz / plan.frameSize;
        expect(plan.frequencyHz).toBeCloseTo(plan.cycles * binHz, 9);
        for (let order = 1; order <= 10; order++) {
          for (let multiple = 1; multiple <= 10; multiple++) {
            expect(Math.abs(order * plan.frequencyHz - multiple * mainsHz)).toBeGreaterThanOrEqual(3 * binHz - 1e-9);
          }
        }
      });
    }
  }

  it('44.1 kHz, 50 Hz mains: nothing coherent near 14 Hz is clear, so the exact frequency is to be used', () => {
    // At 65536 samples a bin is 0.673 Hz. Within 0.14 Hz of 14 Hz only 21 cycles (14.131 Hz) is odd,
    // and its H7 (98.92 Hz) lies 1.6 bins from 100 Hz: too close to tell apart (construction).
    expect(() => planTestFrequency({ targetHz: 14, sampleRateHz: 44100, mainsHz: 50, harmonicCount: 10 })).toThrow(NoCoherentFrequency);
    // A wider stated tolerance allows the next clear count (23 cycles, 15.477 Hz).
    const wide = planTestFrequency({ targetHz: 14, sampleRateHz: 44100, mainsHz: 50, harmonicCount: 10, maxOffsetHz: 2 });
    expect(wide.cycles).toBe(23);
  });

  it('refuses a target at or above Nyquist', () => {
    expect(() => planTestFrequency({ targetHz: 30000, sampleRateHz: 48000, mainsHz: 50, harmonicCount: 10 })).toThrow(/Nyquist/);
  });
});
