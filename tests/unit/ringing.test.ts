// Ringing after the edges of a square-wave response, checked against the textbook second-order
// system (Ogata, Modern Control Engineering, transient response of second-order systems): the step
// response y = 1 − e^{−ζωn t}(cos ωd t + ζ/√(1−ζ²) sin ωd t), its overshoot exp(−ζπ/√(1−ζ²)), its
// ringing at ωd = ωn√(1−ζ²), its logarithmic decrement δ = 2πζ/√(1−ζ²), its extrema at t = kπ/ωd
// lying on e^{−ζωn t}, and no overshoot at all for ζ ≥ 1. The settling time is found on the formula
// itself (tests/support/step-response.ts), never from the code. Square waves are built by
// superposition of step responses (the system is linear), and the scope's capture is modelled as
// added Gaussian noise and an 8-bit ADC over the screen.

import { describe, expect, it } from 'vitest';
import { analyzeRinging, dampingRatioOfOvershoot, DEFAULT_RINGING_OPTIONS, RingingError, type RingingAnalysis } from '../../shared/scope/ringing.ts';
import {
  scopeCapture,
  scopeView,
  settlingFromFormula,
  squareWaveResponse,
  stepResponse,
  textbookLogDecrement,
  textbookOvershoot,
  textbookPeaks,
  textbookRingHz,
  timeToReach,
  type SecondOrder,
} from '../support/step-response.ts';

interface Case {
  system: SecondOrder;
  squareHz: number;
  /** A settling band (percent of the step) that no textbook peak lies within 0.5 % of. */
  bandPercent: number;
}

// Half periods of the square wave at least 12/(ζωn), so each edge starts from a level settled to
// e^{−12} (6·10⁻⁶) of the step: the textbook figures of a lone step apply to every edge.
const CASES: Case[] = [
  { system: { zeta: 0.1, naturalHz: 1e6 }, squareHz: 10e3, bandPercent: 5 },
  { system: { zeta: 0.3, naturalHz: 300e3 }, squareHz: 20e3, bandPercent: 3 },
  { system: { zeta: 0.5, naturalHz: 2.5e6 }, squareHz: 20e3, bandPercent: 2 },
];

const SAMPLES_PER_RING_PERIOD = 100;

/** A record of 2.2 periods from −0.5 V to +0.5 V: four whole edges, two of each polarity. */
function record(system: SecondOrder, squareHz: number, samplesPerPeriod = SAMPLES_PER_RING_PERIOD) {
  const ringHz = system.zeta < 1 ? textbookRingHz(system) : system.naturalHz;
  const dt = 1 / (samplesPerPeriod * ringHz);
  const firstEdgeS = 0.1 / squareHz;
  const clean = squareWaveResponse({ system, squareHz, sampleIntervalS: dt, samples: Math.round(2.2 / squareHz / dt), lowV: -0.5, highV: 0.5, firstEdgeS });
  return { clean, dt, firstEdgeS, ringHz };
}

const captured = scopeView;

const relative = (measured: number | null, expected: number) => Math.abs((measured ?? NaN) / expected - 1);

function expectFourEdges(result: RingingAnalysis) {
  expect(result.edges.map((e) => e.polarity)).toEqual(['rising', 'falling', 'rising', 'falling']);
  for (const edge of result.edges) expect(Math.abs(Math.abs(edge.stepV) - 1)).toBeLessThan(0.01);
}

describe('ringing of a second-order square-wave response (Ogata)', () => {
  describe.each(CASES)('ζ = $system.zeta, fn = $system.naturalHz Hz, square wave $squareHz Hz', ({ system, squareHz, bandPercent }) => {
    const { zeta } = system;
    const { clean, dt, ringHz } = record(system, squareHz);
    const band = bandPercent / 100;
    const settlingS = settlingFromFormula(system, band);

    it('a computed record: overshoot, ringing frequency, decrement, damping ratio and settling as the formulas give', () => {
      const result = analyzeRinging(clean, dt, { settlingBandPercent: bandPercent });
      expectFourEdges(result);
      expect(result.flags).toEqual([]);
      // A parabola over ±45° of a cosine reads its peak 0.14 % low (b⁴/280 of the peak; derived in
      // shared/scope/ringing.ts): 0.1 percentage point at 73 %.
      expect(Math.abs(result.overshootPercent - 100 * textbookOvershoot(zeta))).toBeLessThan(0.15);
      expect(relative(result.ringFrequencyHz, ringHz)).toBeLessThan(5e-4);
      expect(relative(result.logDecrement, textbookLogDecrement(zeta))).toBeLessThan(5e-3);
      expect(relative(result.dampingRatio, zeta)).toBeLessThan(5e-3);
      // The crossing into the band interpolated between samples, on a record smoothed by a
      // sixteenth of the ringing period: within two samples.
      expect(Math.abs(result.settlingTimeS! - settlingS)).toBeLessThan(2 * dt);
      // Rise time from the first 10 % to the first 90 % crossing of the formula, within a sample.
      expect(Math.abs(result.riseTimeS! - (timeToReach(system, 0.9) - timeToReach(system, 0.1)))).toBeLessThan(dt);
      expect(result.dampingRatioAtLeast).toBeNull();
    });

    it('8 bits and noise as a scope adds: the same figures within what those allow', () => {
      // No textbook peak lies near the band, or noise could move the settling by half a period.
      const peaks = textbookPeaks(system, 40).map((p) => Math.abs(p));
      expect(Math.min(...peaks.map((p) => Math.abs(p - band)))).toBeGreaterThan(0.005);
      const result = analyzeRinging(captured(clean), dt, { settlingBandPercent: bandPercent });
      expectFourEdges(result);
      expect(result.flags).toEqual([]);
      // Tolerances: about twice the worst of 20 noise seeds tried while writing the test (ζ = 0.5
      // has only two peaks above the noise: overshoot 16 % and the swing back, 2.7 %).
      expect(Math.abs(result.overshootPercent - 100 * textbookOvershoot(zeta))).toBeLessThan(0.7);
      expect(relative(result.ringFrequencyHz, ringHz)).toBeLessThan(zeta < 0.5 ? 0.01 : 0.03);
      expect(relative(result.logDecrement, textbookLogDecrement(zeta))).toBeLessThan(zeta < 0.5 ? 0.02 : 0.05);
      expect(relative(result.dampingRatio, zeta)).toBeLessThan(zeta < 0.5 ? 0.02 : 0.04);
      expect(Math.abs(result.settlingTimeS! - settlingS)).toBeLessThan(4 * dt + 0.01 / ringHz);
    });
  });

  it('times each edge at its 50 % point, where the formula reaches half the step', () => {
    const system = { zeta: 0.3, naturalHz: 1e6 };
    const { clean, dt, firstEdgeS } = record(system, 20e3);
    const result = analyzeRinging(captured(clean, 4), dt);
    const t50 = timeToReach(system, 0.5);
    result.edges.forEach((edge, k) => {
      // Edge k of the generator's square wave comes k half periods after the first.
      expect(Math.abs(edge.timeS - (firstEdgeS + k / (2 * 20e3) + t50))).toBeLessThan(dt);
    });
  });

  it('the envelope for the plot: the peaks lie on e^{−ζωn t} (Ogata: y − 1 at t = kπ/ωd is −e^{−ζωn t}·cos kπ)', () => {
    const system = { zeta: 0.3, naturalHz: 1e6 };
    const { clean, dt, firstEdgeS } = record(system, 20e3);
    const edge = analyzeRinging(clean, dt).edges[0];
    const sigma = system.zeta * 2 * Math.PI * system.naturalHz;
    expect(relative(edge.envelope!.decayPerS, sigma)).toBeLessThan(5e-3);
    // At the 50 % instant, t50 after the step.
    expect(relative(edge.envelope!.amplitudePercent, 100 * Math.exp(-sigma * timeToReach(system, 0.5)))).toBeLessThan(5e-3);
    // The first peaks one after the other, with alternating signs, at the textbook times kπ/ωd.
    const wd = 2 * Math.PI * textbookRingHz(system);
    const expected = textbookPeaks(system, 3);
    edge.peaks.slice(0, 3).forEach((peak, k) => {
      expect(Math.abs(peak.deviationPercent - 100 * expected[k])).toBeLessThan(0.1);
      expect(Math.abs(peak.timeS - (firstEdgeS + ((k + 1) * Math.PI) / wd))).toBeLessThan(dt);
    });
  });

  it('the default band is ±2 % of the step, the usual criterion (Ogata gives 2 % or 5 %; common practice)', () => {
    expect(DEFAULT_RINGING_OPTIONS.settlingBandPercent).toBe(2);
    const system = { zeta: 0.5, naturalHz: 2.5e6 };
    const { clean, dt } = record(system, 20e3);
    const result = analyzeRinging(clean, dt);
    expect(result.settlingBandPercent).toBe(2);
    expect(Math.abs(result.settlingTimeS! - settlingFromFormula(system, 0.02))).toBeLessThan(2 * dt);
  });
});

describe('no ringing', () => {
  it.each([
    ['overdamped', 1.5],
    ['critically damped', 1],
  ])('%s (ζ = %s): no overshoot (Ogata: none for ζ ≥ 1), no ringing frequency, the no-ringing flag', (_what, zeta) => {
    const system = { zeta, naturalHz: 1e6 };
    const { clean, dt } = record(system, 20e3);
    for (const [what, samples] of [
      ['computed', clean],
      ['8-bit with noise', captured(clean, 3)],
    ] as const) {
      const result = analyzeRinging(samples, dt);
      expect(result.flags, what).toEqual(['no-ringing']);
      expect(result.ringFrequencyHz).toBeNull();
      expect(result.dampingRatio).toBeNull();
      expect(result.logDecrement).toBeNull();
      expect(result.edges).toHaveLength(4);
      for (const edge of result.edges) expect(edge.flags).toEqual(['no-ringing']);
      // What is left is the noise's largest excursion after smoothing: well under 1 % of the step.
      expect(result.overshootPercent).toBeLessThan(what === 'computed' ? 1e-6 : 1);
      expect(relative(result.settlingTimeS, settlingFromFormula(system, 0.02))).toBeLessThan(0.02);
      // No overshoot above the noise: ζ only from below, under 1 (any overshoot at all means ζ < 1, Ogata).
      expect(result.dampingRatioAtLeast!, what).toBeGreaterThan(0.5);
      expect(result.dampingRatioAtLeast!, what).toBeLessThan(1);
      // The 10–90 % rise time found on the step-response formula itself.
      expect(relative(result.riseTimeS, timeToReach(system, 0.9) - timeToReach(system, 0.1)), what).toBeLessThan(0.02);
    }
  });

  it('a record that begins inside an edge, past its 10 % point: that edge’s rise time is unknown, the others give the record’s', () => {
    const system = { zeta: 0.3, naturalHz: 1e6 };
    const dt = 1 / (100 * system.naturalHz);
    // ωn·t = 0.6 after the step, y = 1 − e^{−ζωn t}(cos ωd t + ζ/√(1−ζ²) sin ωd t) ≈ 0.16 (Ogata): between 10 % and 25 %.
    const firstEdgeS = -0.6 / (2 * Math.PI * system.naturalHz);
    expect(stepResponse(system, -firstEdgeS)).toBeGreaterThan(0.1);
    expect(stepResponse(system, -firstEdgeS)).toBeLessThan(0.25);
    const clean = squareWaveResponse({ system, squareHz: 20e3, sampleIntervalS: dt, samples: Math.round(2.2 / 20e3 / dt), lowV: -0.5, highV: 0.5, firstEdgeS });
    const result = analyzeRinging(captured(clean, 3), dt);
    expect(result.edges[0].riseTimeS).toBeNull();
    expect(relative(result.riseTimeS, timeToReach(system, 0.9) - timeToReach(system, 0.1))).toBeLessThan(0.05);
  });

  it('ζ from the overshoot alone inverts Ogata’s M = exp(−ζπ/√(1−ζ²))', () => {
    for (const zeta of [0.05, 0.3, 0.6, 0.9]) expect(dampingRatioOfOvershoot(textbookOvershoot(zeta))).toBeCloseTo(zeta, 9);
  });

  it('ζ = 0.7: one overshoot of 4.6 % and a swing back of 0.2 %, under an 8-bit scope’s noise, is no oscillation', () => {
    const system = { zeta: 0.7, naturalHz: 1e6 };
    // Ogata: the second extremum is exp(−2ζπ/√(1−ζ²)) = 0.21 % of the step.
    expect(Math.abs(textbookPeaks(system, 2)[1])).toBeLessThan(0.0025);
    const { clean, dt } = record(system, 20e3);
    const result = analyzeRinging(captured(clean, 5), dt);
    expect(result.flags).toEqual(['no-ringing']);
    expect(Math.abs(result.overshootPercent - 100 * textbookOvershoot(0.7))).toBeLessThan(0.5);
    // One peak only: ζ from it, a lower bound that lands on the textbook ζ (the overshoot is Ogata's).
    expect(result.dampingRatio).toBeNull();
    expect(Math.abs(result.dampingRatioAtLeast! - 0.7)).toBeLessThan(0.02);
    // Computed, without noise, the swing back counts and the figures are the textbook ones.
    const exact = analyzeRinging(clean, dt);
    expect(exact.flags).toEqual([]);
    expect(relative(exact.dampingRatio, 0.7)).toBeLessThan(5e-3);
    expect(exact.dampingRatioAtLeast).toBeNull();
  });
});

describe('flags', () => {
  const system = { zeta: 0.3, naturalHz: 1e6 };

  it('clipped-record when the screen cuts the overshoot off, and the overshoot read is then too small', () => {
    const { clean, dt } = record(system, 20e3);
    // Screen ±0.7 V: the 37 % overshoot of a 1 V step reaches 0.87 V.
    const clipped = scopeCapture(clean, { screenV: [-0.7, 0.7], bits: 8, noiseV: 0.003, seed: 6 });
    const result = analyzeRinging(clipped, dt);
    expect(result.flags).toContain('clipped-record');
    expect(result.overshootPercent).toBeLessThan(25);
    // The same with the screen wide enough: no flag.
    expect(analyzeRinging(scopeCapture(clean, { screenV: [-1, 1], bits: 8, noiseV: 0.003, seed: 6 }), dt).flags).toEqual([]);
  });

  it('clipped-record when the screen cuts a settled level off', () => {
    const { clean, dt } = record(system, 20e3);
    const result = analyzeRinging(scopeCapture(clean, { screenV: [-1.2, 0.48], bits: 8, noiseV: 0.003, seed: 6 }), dt);
    expect(result.flags).toContain('clipped-record');
  });

  it('too-few-edges for a single step, whose figures are still the textbook ones', () => {
    const dt = 1e-8;
    const step = Float64Array.from({ length: 6000 }, (_, i) => -0.5 + stepResponse(system, i * dt - 5e-6));
    const result = analyzeRinging(captured(step, 2), dt);
    expect(result.flags).toEqual(['too-few-edges']);
    expect(result.edges).toHaveLength(1);
    expect(relative(result.ringFrequencyHz, textbookRingHz(system))).toBeLessThan(0.01);
    expect(Math.abs(result.overshootPercent - 100 * textbookOvershoot(0.3))).toBeLessThan(0.7);
  });

  it('not-settled when the square wave is too fast for the ringing to die: the ringing is still reported', () => {
    const light = { zeta: 0.1, naturalHz: 1e6 };
    // Half period 7.1 µs: the response enters the ±2 % band 6.1 µs after the step (the formula),
    // inside the last quarter before the next edge, too late to see it stay there.
    expect(settlingFromFormula(light, 0.02) + timeToReach(light, 0.5)).toBeGreaterThan(0.75 * (1 / 140e3));
    const { clean, dt } = record(light, 70e3);
    const result = analyzeRinging(captured(clean, 8), dt);
    expect(result.flags).toContain('not-settled');
    expect(result.flags).not.toContain('no-ringing');
    expect(result.settlingTimeS).toBeNull();
    expect(relative(result.ringFrequencyHz, textbookRingHz(light))).toBeLessThan(0.01);
  });

  it('noisy when the noise left after smoothing is a fifth of the settling band or more: no settling time', () => {
    const { clean, dt } = record(system, 20e3);
    // Noise of 4 codes, 2.5 % of the step, on an 8-bit screen 1.9 times the step.
    const result = analyzeRinging(captured(clean, 14, 4), dt);
    expect(result.flags).toEqual(['noisy']);
    expect(result.settlingTimeS).toBeNull();
    expect(relative(result.ringFrequencyHz, textbookRingHz(system))).toBeLessThan(0.02);
  });

  it('undersampled with fewer than 8 samples per ringing period', () => {
    const { clean, dt } = record(system, 20e3, 6);
    const result = analyzeRinging(captured(clean, 9), dt);
    expect(result.flags).toContain('undersampled');
    expect(result.ringFrequencyHz).not.toBeNull();
  });

  it('irregular-edges when the edges do not come a square wave’s period apart', () => {
    const { clean, dt } = record(system, 20e3);
    // Two records joined: the second starts mid-way through a half period.
    const joined = new Float64Array(clean.length + 1200);
    joined.set(clean.subarray(0, 6000));
    joined.set(clean.subarray(4800), 6000);
    const result = analyzeRinging(captured(joined, 10), dt);
    expect(result.flags).toContain('irregular-edges');
  });

  it('a sustained oscillation (ζ = 0, Ogata: y = 1 − cos ωn t) never settles and shows a damping ratio near 0', () => {
    const dt = 1e-8;
    const { clean } = record({ zeta: 1.5, naturalHz: 1e6 }, 20e3);
    // An overdamped square-wave response with a 10 % undamped oscillation started by every edge.
    const ringing = clean.map((v, i) => v + 0.1 * Math.sin(2 * Math.PI * 1e6 * i * dt));
    const result = analyzeRinging(captured(ringing, 11), dt);
    expect(result.flags).toContain('not-settled');
    expect(Math.abs(result.dampingRatio!)).toBeLessThan(0.02);
    expect(relative(result.ringFrequencyHz, 1e6)).toBeLessThan(0.01);
  });
});

describe('refusals', () => {
  const refusal = (samples: ArrayLike<number>, dt = 1e-8) => {
    try {
      analyzeRinging(samples, dt);
    } catch (error) {
      if (error instanceof RingingError) return error.message;
      throw error;
    }
    throw new Error('analysed a record it should have refused');
  };

  it('noise alone is no square wave', () => {
    const noise = captured(new Float64Array(5000).map((_, i) => (i % 2 ? 1e-9 : 0)), 12, 2);
    expect(refusal(noise)).toMatch(/^the record shows no square wave: it does not settle at two levels clear of the noise/);
  });

  it('a constant record, a short record, a bad interval', () => {
    expect(refusal(new Float64Array(5000).fill(0.25))).toBe('every sample reads 0.25: the record shows no square wave; check the probe and the channel');
    expect(refusal(new Float64Array(10))).toMatch(/^the record holds 10 samples/);
    expect(refusal(new Float64Array(5000), 0)).toMatch(/^the sample interval must be a positive number of seconds/);
  });

  it('edges with no settled stretch between them: a square wave of 10 samples a period', () => {
    const fast = Float64Array.from({ length: 1000 }, (_, i) => (i % 10 < 5 ? -0.5 : 0.5));
    expect(refusal(fast)).toMatch(/^no complete edge: no edge has a settled stretch after it/);
  });
});
