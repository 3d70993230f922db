import { describe, expect, it } from 'vitest';
import { bandDeviation, chainResponse, planSteppedSine, type ResponseStep } from '../../shared/calibration/chain-response.ts';

// ISO 266:1997 preferred frequencies for one-third-octave steps, 10 Hz–20 kHz, typed here from
// memory of the standard (not copied from the code under test).
const ISO_266 = [
  10, 12.5, 16, 20, 25, 31.5, 40, 50, 63, 80, 100, 125, 160, 200, 250, 315, 400, 500, 630, 800, 1000, 1250, 1600, 2000, 2500,
  3150, 4000, 5000, 6300, 8000, 10000, 12500, 16000, 20000,
];

describe('stepped-sine plan', () => {
  it('steps through the ISO 266 third-octave frequencies from 10 Hz to 20 kHz at 48 kHz (0.45 × 48 kHz = 21.6 kHz lies above 20 kHz)', () => {
    const plan = planSteppedSine({ sampleRateHz: 48000 });
    expect(plan.map((s) => s.frequencyHz)).toEqual(ISO_266);
    expect(plan.every((s) => s.nominalHz === s.frequencyHz && !s.coherent)).toBe(true);
  });

  it('the list is the base-ten third-octave series 1000·10^(n/10), rounded as ISO 266 rounds it (within 2 %)', () => {
    // ISO 266:1997: the exact band centres are 1000·10^(n/10) Hz; the preferred values round them.
    const plan = planSteppedSine({ sampleRateHz: 48000 });
    plan.forEach((step, i) => {
      const exact = 1000 * 10 ** ((i - 20) / 10);
      expect(Math.abs(step.frequencyHz / exact - 1)).toBeLessThan(0.02);
    });
  });

  it.each([
    // 0.45 × 44100 = 19845 Hz: the highest preferred frequency at or below it is 16 kHz.
    [44100, 16000],
    // 0.45 × 32000 = 14400 Hz → 12.5 kHz.
    [32000, 12500],
    // 0.45 × 96000 = 43200 Hz, above 20 kHz → 20 kHz.
    [96000, 20000],
  ])('at %i Hz the top step is %i Hz, the highest preferred frequency ≤ 0.45 × the sample rate and ≤ 20 kHz', (rate, top) => {
    const plan = planSteppedSine({ sampleRateHz: rate });
    expect(plan[0].frequencyHz).toBe(10);
    expect(plan[plan.length - 1].frequencyHz).toBe(top);
    expect(plan.map((s) => s.frequencyHz)).toEqual(ISO_266.filter((f) => f <= top));
  });

  it('on one clock each coherent step is a whole, odd number of cycles per frame within 5 % of its preferred frequency; the others stay at it', () => {
    const rate = 48000;
    const plan = planSteppedSine({ sampleRateHz: rate, oneClock: { mainsHz: 50, harmonicCount: 10 } });
    expect(plan.map((s) => s.nominalHz)).toEqual(ISO_266);
    expect(plan.filter((s) => s.coherent).length).toBeGreaterThan(ISO_266.length / 2);
    for (const step of plan) {
      if (step.coherent) {
        // Coherent sampling (by construction of a DFT frame): f = cycles · fs / N exactly.
        const cycles = (step.frequencyHz * step.frameSize!) / rate;
        expect(cycles).toBeCloseTo(step.cycles!, 9);
        expect(step.cycles! % 2).toBe(1);
        expect(Math.abs(step.frequencyHz / step.nominalHz - 1)).toBeLessThanOrEqual(0.05);
      } else {
        expect(step.frequencyHz).toBe(step.nominalHz);
      }
    }
  });
});

// A first-order high-pass (textbook RC): |H(f)| = f / √(f² + fc²), 3 dB down at fc.
const FC = 5;
const highPassDb = (f: number) => 20 * Math.log10(f / Math.sqrt(f * f + FC * FC));

function highPassSteps(frequencies: number[], generatorDbfs = -12, flatGainDb = -0.7): ResponseStep[] {
  return frequencies.map((f) => ({ frequencyHz: f, generatorDbfs, capturedDbfs: generatorDbfs + flatGainDb + highPassDb(f) }));
}

describe('chain response', () => {
  it('of a first-order high-pass at 5 Hz gives the deviations from 1 kHz that the formula gives at 10 and 20 Hz', () => {
    const outcome = chainResponse(highPassSteps(ISO_266));
    expect(outcome.ok).toBe(true);
    if (!outcome.ok) return;
    const at = (f: number) => outcome.response.points.find((p) => p.frequencyHz === f)!;
    expect(outcome.response.referenceHz).toBe(1000);
    // Gain is captured − generator: the flat −0.7 dB plus the high-pass at 1 kHz.
    expect(outcome.response.referenceGainDb).toBeCloseTo(-0.7 + highPassDb(1000), 9);
    expect(at(10).relativeDb).toBeCloseTo(highPassDb(10) - highPassDb(1000), 9); // about −0.97 dB
    expect(at(20).relativeDb).toBeCloseTo(highPassDb(20) - highPassDb(1000), 9); // about −0.26 dB
    expect(at(10).gainDb).toBeCloseTo(-0.7 + highPassDb(10), 9);
    // Over 20 Hz–20 kHz the worst point is 20 Hz (the filter only falls toward low frequencies).
    const band = bandDeviation(outcome.response, 20, 20000)!;
    expect(band.worstHz).toBe(20);
    expect(band.worstDb).toBeCloseTo(Math.abs(highPassDb(20) - highPassDb(1000)), 9);
    expect(band.minDb).toBeCloseTo(highPassDb(20) - highPassDb(1000), 9);
    // Over 10 Hz–20 kHz it is 10 Hz.
    expect(bandDeviation(outcome.response, 10, 20000)!.worstHz).toBe(10);
  });

  it('refers to a 1 kHz step planned a little off 1 kHz, and does not depend on the generator level', () => {
    const steps = highPassSteps([20, 1001.5, 5000], -20).concat(highPassSteps([10], -6));
    const outcome = chainResponse(steps);
    expect(outcome.ok && outcome.response.referenceHz).toBe(1001.5);
    if (!outcome.ok) return;
    const ten = outcome.response.points[0];
    expect(ten.frequencyHz).toBe(10);
    expect(ten.relativeDb).toBeCloseTo(highPassDb(10) - highPassDb(1001.5), 9);
  });

  it('refuses a set without the 1 kHz reference step, saying so', () => {
    const outcome = chainResponse(highPassSteps(ISO_266.filter((f) => f !== 1000)));
    expect(outcome.ok).toBe(false);
    if (!outcome.ok) expect(outcome.reason).toMatch(/1000 Hz/);
  });

  it.each([NaN, Infinity, -Infinity])('refuses a step whose captured level is %s, naming the step and field', (bad) => {
    const steps = highPassSteps(ISO_266);
    steps[3] = { ...steps[3], capturedDbfs: bad };
    const outcome = chainResponse(steps);
    expect(outcome.ok).toBe(false);
    if (!outcome.ok) expect(outcome.reason).toMatch(/Step 4 has capturedDbfs/);
  });

  it('refuses an empty set', () => {
    expect(chainResponse([]).ok).toBe(false);
  });
});
