import { describe, expect, it } from 'vitest';
import { HarmonicAnalyzer } from '../../shared/measurement/harmonic-analyzer.ts';
import { createHarmonicAnalysis } from '../../shared/measurement/reading.ts';
import { wrapDegrees } from '../../shared/levels.ts';
import { dbc, tone } from '../support/signals.ts';

function analyse(samples: Float64Array, sampleRateHz: number, frameSize = samples.length) {
  return new HarmonicAnalyzer(frameSize, sampleRateHz).analyze(samples, createHarmonicAnalysis());
}

describe('HarmonicAnalyzer on synthetic tones (expected values come from the construction)', () => {
  it('reads a non-coherent tone and its harmonics: level, frequency, phase', () => {
    const rate = 48000;
    // 1003.7 Hz does not fit a whole number of cycles in 16384 samples: scalloping must be corrected.
    const signal = tone(16384, rate, 1003.7, 0.5, {
      phaseDeg: 30,
      partials: [
        { order: 2, levelDbc: -40, phaseDeg: 75 },
        { order: 3, levelDbc: -60, phaseDeg: 100 },
      ],
    });
    const result = analyse(signal, rate);
    expect(result.fundamental.frequencyHz).toBeCloseTo(1003.7, 3);
    // AES17: a full-scale sine is 0 dBFS, so a peak of 0.5 is 20·log10(0.5) = −6.0206 dBFS.
    expect(Math.abs(result.fundamental.levelDbfs - 20 * Math.log10(0.5))).toBeLessThan(0.02);
    expect(result.fundamental.phaseDeg).toBeCloseTo(30, 1);
    const h2 = result.harmonics.find((h) => h.order === 2)!;
    const h3 = result.harmonics.find((h) => h.order === 3)!;
    expect(Math.abs(h2.levelDbc + 40)).toBeLessThan(0.05);
    expect(Math.abs(h3.levelDbc + 60)).toBeLessThan(0.1);
    // Relative phase φn − n·φ1 (design §4): 75 − 2·30 = 15°, 100 − 3·30 = 10°.
    expect(Math.abs(wrapDegrees(h2.phaseDeg - 15))).toBeLessThan(0.5);
    expect(Math.abs(wrapDegrees(h3.phaseDeg - 10))).toBeLessThan(1);
    // THD is the RSS of the harmonics over the fundamental: √(0.01² + 0.001²).
    const expectedThd = Math.hypot(0.01, 0.001);
    expect(Math.abs(result.thdPercent - 100 * expectedThd)).toBeLessThan(0.001);
    expect(Math.abs(result.thdDb - dbc(expectedThd))).toBeLessThan(0.05);
    expect(result.flags).toEqual([]);
  });

  it('gives the Fourier-series THD of a band-limited square wave (odd harmonics at 1/n)', () => {
    // Square wave Fourier series: odd harmonics at 1/n, so THD over H2..H10 is
    // √(1/9 + 1/25 + 1/49 + 1/81) = 42.88 % (textbook result, derived here).
    const partials = [3, 5, 7, 9].map((n) => ({ order: n, levelDbc: dbc(1 / n), phaseDeg: 0 }));
    const result = analyse(tone(32768, 44100, 441, 0.4, { partials }), 44100);
    const expected = 100 * Math.sqrt(1 / 9 + 1 / 25 + 1 / 49 + 1 / 81);
    expect(expected).toBeCloseTo(42.88, 2);
    expect(result.thdPercent).toBeCloseTo(expected, 2);
  });

  it('holds a −70 dBc H3 at 14 Hz, a low-frequency trim tone, within 0.1 dB', () => {
    const rate = 48000;
    const result = analyse(tone(65536, rate, 14, 0.25, { partials: [{ order: 3, levelDbc: -70, phaseDeg: -45 }] }), rate);
    expect(result.fundamental.frequencyHz).toBeCloseTo(14, 4);
    expect(Math.abs(result.harmonics.find((h) => h.order === 3)!.levelDbc + 70)).toBeLessThan(0.1);
    expect(result.harmonics.find((h) => h.order === 2)!.levelDbc).toBeLessThan(-120);
  });

  it('keeps harmonic phases when the frame is shifted in time (φn − n·φ1 is shift-invariant)', () => {
    const rate = 48000;
    const partials = [{ order: 3, levelDbc: -50, phaseDeg: 123 }];
    const a = analyse(tone(16384, rate, 997, 0.5, { partials }), rate);
    const b = analyse(tone(16384, rate, 997, 0.5, { partials, startSample: 1234 }), rate);
    expect(Math.abs(wrapDegrees(a.fundamental.phaseDeg - b.fundamental.phaseDeg))).toBeGreaterThan(1);
    expect(Math.abs(wrapDegrees(a.harmonics[1].phaseDeg - b.harmonics[1].phaseDeg))).toBeLessThan(0.5);
  });

  it('leaves out harmonics at or above Nyquist', () => {
    // 3 kHz at 44.1 kHz: H7 = 21 kHz is below Nyquist (22.05 kHz), H8 = 24 kHz is not.
    const result = analyse(tone(16384, 44100, 3000, 0.5), 44100);
    expect(result.harmonics.map((h) => h.order)).toEqual([2, 3, 4, 5, 6, 7]);
  });

  it('flags silence as no-signal and a clipped tone as clipping', () => {
    const silent = analyse(new Float64Array(8192), 48000);
    expect(silent.flags).toContain('no-signal');
    expect(silent.harmonics).toEqual([]);
    const clipped = tone(8192, 48000, 1000, 1.3).map((x) => Math.max(-1, Math.min(1, x)));
    expect(analyse(clipped, 48000).flags).toContain('clipping');
  });

  it('rejects a frame size that is not a power of two', () => {
    expect(() => new HarmonicAnalyzer(1000, 48000)).toThrow(/power of two/);
  });
});
