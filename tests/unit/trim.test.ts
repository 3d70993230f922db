// The trim model and assistant against trim curves built from a known null (design §5).

import { describe, expect, it } from 'vitest';
import { adviseTrim, COPPER_ALPHA_PER_C, thermalMargin, warmRecheck, type TrimPointData } from '../../shared/trim/trim-assistant.ts';
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

  it('the phase turns by about 180° through the null (design §5)', () => {
    const before = shape(3).phaseDeg;
    const after = shape(7.4).phaseDeg;
    const turned = (((after - before) % 360) + 360) % 360;
    expect(Math.abs(turned - 180)).toBeLessThan(10);
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
    const advice = adviseTrim(points([0, 2, 6], shape), options);
    expect(advice.side).toBe('past-null');
    expect(advice.warnings.map((w) => w.id)).toContain('past-null');
    expect(advice.recommendedPosition!).toBeLessThanOrEqual(advice.fit!.nullPosition);
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
  it('uses α = 0.00393 per °C: a 10 °C change moves a winding about 4 % (common practice)', () => {
    expect(COPPER_ALPHA_PER_C).toBe(0.00393);
    expect(COPPER_ALPHA_PER_C * 10).toBeCloseTo(0.04, 2);
  });

  it('gives the temperature change that keeps the residual inside the limit, from R(T) = R20·(1 + α·ΔT)', () => {
    // Uncompensated −40 dBc (0.01), residual −72 dBc, limit −60 dBc (0.001).
    const uncompensated = 0.01;
    const residual = 10 ** (-72 / 20);
    const margin = thermalMargin(uncompensated, residual, 0.001)!;
    // The residual grows by α·ΔT of the uncompensated distortion: solve residual + α·ΔT·D0 = limit.
    const untrackedAtMargin = COPPER_ALPHA_PER_C * margin.deltaTemperatureC * uncompensated;
    expect(residual + untrackedAtMargin).toBeCloseTo(0.001, 12);
    expect(margin.deltaTemperatureC).toBeGreaterThan(10);
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
