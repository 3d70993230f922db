// The trim model and assistant against trim curves built from a known null (design §5).

import { describe, expect, it } from 'vitest';
import { adviseTrim, COPPER_ALPHA_PER_C, describeThermalMargin, thermalMargin, warmRecheck, type TrimPointData } from '../../shared/trim/trim-assistant.ts';
import { gaussian, seededRandom } from '../support/random.ts';
import { fitTrimCurve, TrimFitError } from '../../shared/trim/trim-model.ts';

const db = (ratio: number) => 20 * Math.log10(ratio);

/**
 * A trim curve with its null at `nullAt` and depth `depth` by construction: the residual is a fixed
 * vector perpendicular to the slope plus the slope times the distance from the null, so |H| is
 * least, and equal to the depth, exactly at the null.
 */
function curve({ nullAt, depth, slope, slopeDeg = 40 }: { nullAt: number; depth: number; slope: number; slopeDeg?: number }) {
  const b = (slopeDeg * Math.PI) / 180;
  const offset = b + Math.PI / 2;
  return (position: number) => {
    const re = depth * Math.cos(offset) + slope * (position - nullAt) * Math.cos(b);
    const im = depth * Math.sin(offset) + slope * (position - nullAt) * Math.sin(b);
    return { levelDbc: db(Math.hypot(re, im)), phaseDeg: (Math.atan2(im, re) * 180) / Math.PI };
  };
}

function points(at: number[], shape: ReturnType<typeof curve>, extra: Partial<TrimPointData> = {}): TrimPointData[] {
  return at.map((position) => ({ position, ...shape(position), gainDb: -12, lfDbfs: -120, ...extra }));
}

describe('trim model', () => {
  const shape = curve({ nullAt: 5.2, depth: 10 ** (-72 / 20), slope: 0.002 });

  it('phasor model finds the null and its depth from two points on the safe side', () => {
    const fit = fitTrimCurve(points([0, 1], shape));
    expect(fit.model).toBe('phasor');
    expect(fit.nullPosition).toBeCloseTo(5.2, 6);
    expect(fit.nullLevelDbc).toBeCloseTo(-72, 4);
  });

  it("the phasor fit predicts the construction's level where it was given no point", () => {
    const fit = fitTrimCurve(points([0, 1, 2], shape));
    // Construction: |H(p)|² = depth² + (slope·(p − null))².
    for (const p of [3, 5.2, 7]) expect(fit.predictDbc(p)).toBeCloseTo(db(Math.hypot(10 ** (-72 / 20), 0.002 * (p - 5.2))), 3);
  });

  it('magnitude model fits the rounded V when there are no phases', () => {
    const magnitudeOnly = points([0, 2, 4, 5, 6.5], shape).map((p) => ({ ...p, phaseDeg: null }));
    const fit = fitTrimCurve(magnitudeOnly);
    expect(fit.model).toBe('magnitude');
    expect(fit.reason).toMatch(/no phase/);
    expect(Math.abs(fit.nullPosition - 5.2)).toBeLessThan(0.01);
    expect(Math.abs(fit.nullLevelDbc - -72)).toBeLessThan(0.3);
    expect(fit.nullPositionPlusMinus).toBeGreaterThan(0);
  });

  it('falls back to the magnitude model when the phases do not lie on a line, and says so', () => {
    const scrambled = points([0, 2, 4, 5, 6.5], shape).map((p, i) => ({ ...p, phaseDeg: (p.phaseDeg ?? 0) + [0, 150, -120, 90, 60][i] }));
    const fit = fitTrimCurve(scrambled);
    expect(fit.model).toBe('magnitude');
    expect(fit.reason).toMatch(/phases do not lie on a straight line/);
    expect(Math.abs(fit.nullPosition - 5.2)).toBeLessThan(0.02);
  });

  it('is robust to one bad point', () => {
    const data = points([0, 1, 2, 3, 4, 4.5], shape);
    data[3] = { ...data[3], levelDbc: data[3].levelDbc + 12 }; // a reading taken while the trimmer moved
    const fit = fitTrimCurve(data);
    expect(fit.excludedPoint).toBe(3);
    expect(Math.abs(fit.nullPosition - 5.2)).toBeLessThan(0.01);
  });

  it('needs two usable points', () => {
    expect(() => fitTrimCurve(points([0], shape))).toThrow(TrimFitError);
    expect(() => fitTrimCurve(points([1, 1], shape))).toThrow(/two different positions/);
  });

  it('states a null uncertainty that covers the error with noisy readings', () => {
    let seed = 3;
    const random = () => ((seed = (seed * 16807) % 2147483647) / 2147483647) - 0.5;
    let covered = 0;
    for (let trial = 0; trial < 50; trial++) {
      const noisy = points([0, 1.5, 3, 4.5, 6], shape).map((p) => ({ ...p, levelDbc: p.levelDbc + 0.3 * random(), phaseDeg: p.phaseDeg! + 2 * random() }));
      const fit = fitTrimCurve(noisy);
      if (Math.abs(fit.nullPosition - 5.2) <= fit.nullPositionPlusMinus) covered++;
    }
    // About two standard deviations: most trials fall inside.
    expect(covered).toBeGreaterThanOrEqual(40);
  });
});

describe('trim assistant', () => {
  const shape = curve({ nullAt: 5.2, depth: 10 ** (-72 / 20), slope: 0.002 });
  const options = { positionMin: 0, positionMax: 10, positionStep: 0.25, limitDbc: -60, marginDb: 1 };

  it('recommends the point short of the null farthest from it within 1 dB of the null depth', () => {
    const advice = adviseTrim(points([0, 1, 3, 5.5], shape), options);
    expect(advice.bracketed).toBe(true);
    expect(advice.recommendedPosition!).toBeLessThan(advice.fit!.nullPosition);
    // Predicted by the construction, not by the fit: 1 dB above the depth at the recommended setting.
    expect(shape(advice.recommendedPosition!).levelDbc).toBeCloseTo(-72 + 1, 1);
  });

  it('never recommends a setting past the null, and says when the trimmer is past it', () => {
    const advice = adviseTrim(points([0, 2, 4.5, 5, 5.4, 6], shape), options);
    expect(advice.side).toBe('past-null');
    expect(advice.warnings.map((w) => w.id)).toContain('past-null');
    // The construction's null is at 5.2.
    expect(advice.recommendedPosition!).toBeLessThan(5.2);
  });

  it('suggests a next position toward the null, never more than one step past it', () => {
    const advice = adviseTrim(points([0, 1], shape), options);
    expect(advice.side).toBe('short-of-null');
    expect(advice.bracketed).toBe(false);
    expect(advice.nextPosition).toBeGreaterThan(1);
    expect(advice.nextPosition).toBeLessThanOrEqual(5.2 + 0.25 + 1e-9);
  });

  it('keeps the recommendation inside the limit when the margin would not', () => {
    const shallow = curve({ nullAt: 5.2, depth: 10 ** (-61 / 20), slope: 0.002 });
    const advice = adviseTrim(points([0, 1, 4, 6], shallow), { ...options, marginDb: 3 });
    expect(shallow(advice.recommendedPosition!).levelDbc).toBeLessThanOrEqual(-60 + 0.05);
  });

  it('raises gain-rise, lf-instability, amplitude-wander and clipping with what was seen and what to do', () => {
    const data = points([0, 2, 4], shape);
    data[2] = { ...data[2], gainDb: -12 + 0.6, lfDbfs: -120 + 11, clipping: true };
    const advice = adviseTrim(data, options, { levelsDbfs: [-11.4, -11.2, -11.5, -11.3, -11.6], lfDbfs: [] });
    const ids = advice.warnings.map((w) => w.id);
    expect(ids).toEqual(expect.arrayContaining(['gain-rise', 'lf-instability', 'amplitude-wander', 'clipping']));
    for (const warning of advice.warnings) {
      expect(warning.seen.length).toBeGreaterThan(10);
      expect(warning.advice).toMatch(/back|Lower|Turn/i);
    }
  });

  it('raises lf-instability when the sub-audio level grows from reading to reading, not for a passing thump', () => {
    // Six live readings a second for four seconds, rising 2 dB a second from the safe end's −120 dBFS.
    const rising = Array.from({ length: 24 }, (_, i) => -120 + (2 * i) / 6);
    const advice = adviseTrim(points([0, 2], shape), options, { levelsDbfs: [], lfDbfs: rising });
    expect(advice.warnings.map((w) => w.id)).toContain('lf-instability');
    // A thump that rises and falls again within the window is not growth.
    const thump = Array.from({ length: 24 }, (_, i) => -120 + 8 * Math.sin((Math.PI * i) / 23));
    expect(adviseTrim(points([0, 2], shape), options, { levelsDbfs: [], lfDbfs: thump }).warnings.map((w) => w.id)).not.toContain('lf-instability');
  });
});

describe('thermal margin (IEC 60028 copper)', () => {
  it('gives the temperature change that keeps the residual inside the limit, found by warming a simulated winding', () => {
    // Construction: distortion proportional to the net resistance R(T) − Rc with R(T) = R20·(1 + α·(T − 20 °C))
    // (copper, IEC 60028 α = 0.00393/°C) and an untracked compensation Rc set to leave a −72 dBc residual in
    // the worst phase; uncompensated (Rc = 0) the stage gives −40 dBc. Warm it 0.001 °C at a time until it fails −60 dBc.
    const r20 = 10;
    const uncompensated = 0.01;
    const perOhm = uncompensated / r20;
    const rc = r20 - 10 ** (-72 / 20) / perOhm;
    let rise = 0;
    while (perOhm * (r20 * (1 + 0.00393 * rise) - rc) <= 0.001) rise += 0.001;
    const margin = thermalMargin(uncompensated, 10 ** (-72 / 20), 0.001)!;
    expect(margin.deltaTemperatureC).toBeCloseTo(rise, 2);
  });

  it('reports how much of the untracked drift the unit tracked out when warm', () => {
    // Untracked, 15 °C would move the harmonic by α·15·0.01 = 5.9e-4; the warm reading moved half that.
    const drift = COPPER_ALPHA_PER_C * 15 * 0.01;
    const cold = { levelDbc: db(2e-4), phaseDeg: 0, temperatureC: 22 };
    const warm = { levelDbc: db(2e-4 + drift / 2), phaseDeg: 0, temperatureC: 37 };
    const check = warmRecheck(cold, warm, -40);
    expect(check.temperatureRiseC).toBe(15);
    expect(check.trackingFraction).toBeCloseTo(0.5, 6);
  });
});

describe('trim assistant: never past the null, given what is known (issue 7)', () => {
  const options = { positionMin: 0, positionMax: 10, positionStep: 0.25, limitDbc: -60, marginDb: 1 };

  it('gives no recommendation from two points far short of an uncertain null, only where to record next', () => {
    // Construction: null at 5.0, −75 dBc, safe end at −40 dBc; two noisy readings at 0 and 1.
    const shape = curve({ nullAt: 5, depth: 10 ** (-75 / 20), slope: 0.002 });
    const data = points([0, 1], shape).map((p, i) => ({ ...p, levelDbc: p.levelDbc + [0.2, -0.2][i] }));
    const advice = adviseTrim(data, options);
    expect(advice.fitProblem).toBeNull();
    expect(advice.recommendedPosition).toBeNull();
    expect(advice.recommendationNote).toMatch(/record the next point at \d/);
    // At most one step past the null's far bound, and a real move from 1.
    expect(advice.nextPosition).toBeGreaterThan(1);
    expect(advice.nextPosition).toBeLessThanOrEqual(advice.fit!.nullPosition + advice.fit!.nullPositionPlusMinus + 0.25 + 1e-9);
  });

  it('states a ± that holds the true null about 95 % of the time even from two points', () => {
    // Construction: known null 5.1; noise as stated to the fit (3 % of the amplitude, the floor at −100 dBc).
    const normal = gaussian(seededRandom(77));
    const p0 = 5.1;
    const depth = 10 ** (-75 / 20);
    const slope = 0.01 / p0;
    let covered = 0;
    const trials = 3000;
    for (let t = 0; t < trials; t++) {
      const data = [0, 1].map((p) => {
        const re = slope * (p - p0) * (1 + 0.03 * normal()) + 7e-6 * normal();
        const im = depth * (1 + 0.03 * normal()) + 7e-6 * normal();
        return { position: p, levelDbc: db(Math.hypot(re, im)), phaseDeg: (Math.atan2(im, re) * 180) / Math.PI };
      });
      const fit = fitTrimCurve(data);
      if (Math.abs(fit.nullPosition - p0) <= fit.nullPositionPlusMinus) covered++;
    }
    // A 95 % interval: binomial spread over 3000 trials is about ±0.4 %.
    expect(covered / trials).toBeGreaterThanOrEqual(0.945);
    expect(covered / trials).toBeLessThan(0.995);
  });
});

describe('trim assistant: says when the fit cannot be trusted (issue 7)', () => {
  const options = { positionMin: 0, positionMax: 10, positionStep: 0.25, limitDbc: -60, marginDb: 1 };

  it('a trimmer with no effect gives a plain message, no numbers, no past-null warning and a sensible next position', () => {
    // Construction: the same −48 dBc at every position, with ±0.2 dB and ±1° of reading noise.
    const data = [0, 1, 2].map((position, i) => ({ position, levelDbc: -48 + [0.2, -0.2, 0.1][i], phaseDeg: 30 + [1, -1, 0.5][i], gainDb: -12, lfDbfs: -110 }));
    const advice = adviseTrim(data, options);
    expect(advice.fit).toBeNull();
    expect(advice.fitProblem).toMatch(/barely change with the trimmer/);
    expect(advice.fitProblem).toMatch(/trimmer is in circuit and the right channel is captured/);
    expect(advice.recommendedPosition).toBeNull();
    expect(advice.warnings.map((w) => w.id)).not.toContain('past-null');
    expect(advice.nextPosition).toBeGreaterThan(2);
    expect(advice.nextPosition).toBeLessThanOrEqual(10);
  });

  it('readings that follow no trim curve in either model give a message and no numbers', () => {
    // Construction: levels and phases drawn without regard to position.
    const data = [0, 1, 2, 3, 4, 5].map((position, i) => ({
      position,
      levelDbc: [-40, -70, -42, -75, -41, -72][i],
      phaseDeg: [0, 120, -100, 40, 170, -60][i],
      gainDb: -12,
      lfDbfs: -110,
    }));
    const advice = adviseTrim(data, options);
    expect(advice.fit).toBeNull();
    expect(advice.fitProblem).toMatch(/do not follow one trim curve/);
  });

  it("a null beyond the trimmer's end is reported as out of reach, with no numbers", () => {
    const shape = curve({ nullAt: 16, depth: 10 ** (-75 / 20), slope: 0.002 });
    const advice = adviseTrim(points([0, 1, 2, 3, 4], shape), options);
    expect(advice.fit).toBeNull();
    expect(advice.fitProblem).toMatch(/beyond the trimmer's end/);
  });
});

describe('thermal margin in plain words', () => {
  it('caps an unreasonably wide margin at "more than 50 °C" and rounds a usual one down', () => {
    expect(describeThermalMargin(194)).toMatch(/more than 50 °C either way/);
    expect(describeThermalMargin(16.8)).toMatch(/up to 16 °C either way/);
    expect(describeThermalMargin(null)).toBeNull();
  });
});
