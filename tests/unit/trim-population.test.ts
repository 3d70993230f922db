// The trim assistant on a simulated population (tests/support/trim-population.ts): hidden units from
// the phasor model H(p) = A + B·p with their true null and depth known by construction, readings with
// 3 % amplitude noise, 1.5° phase noise and a −100 dBc floor, technicians typing nextPosition from
// the safe end. Issue 7's targets: no recommendation ever past the true null, a settled recommendation
// within 8 points for nearly every unit, and its true level within about 2 dB of the true depth.

import { describe, expect, it } from 'vitest';
import { simulatePopulation } from '../support/trim-population.ts';

describe('trim assistant on a simulated population (seeded)', () => {
  const figures = simulatePopulation({ units: 400, seed: 20611 });

  it('shows no recommendation past the true null, over every unit and every recommendation shown', () => {
    expect(figures.recommendationsShown).toBeGreaterThan(400);
    expect(figures.pastNull).toBe(0);
    expect(figures.worstMargin).toBeGreaterThan(0);
  });

  it('reaches a recommendation that holds within 8 points for at least 95 % of units', () => {
    expect(figures.shareWithin8Points).toBeGreaterThanOrEqual(0.95);
  });

  it('leaves at least 95 % of units within 2 dB of their true null depth', () => {
    expect(figures.shareWithin2Db).toBeGreaterThanOrEqual(0.95);
  });
});
