// judgeTrimRun against the rules of issue 7 ("Finishing"): PASS only when the null was located, the
// final point is settled, in the fit, of the stimulus, at the recommended setting within half a step,
// on the safe side, with no warning standing and THD within the limit. The assessment below is
// written by hand for a unit whose null is at 5 turns; each case breaks one rule.

import { describe, expect, it } from 'vitest';
import { DEMO_PROCEDURE } from '../../shared/procedures/demo-procedure.ts';
import { judgeTrimRun, type JudgedPoint, type JudgedRun } from '../../shared/records/verdict.ts';
import type { TrimAssessment } from '../../shared/trim/assessment.ts';
import { readingWithThd } from '../support/station.ts';

const TRIM = DEMO_PROCEDURE.trim; // positionStep 0.25, limit −60 dB, 14 Hz at −12 dBFS (invented)

const assessment: TrimAssessment = {
  harmonicOrder: 3,
  model: 'phasor',
  reason: 'phases agree with a straight line',
  fitProblem: null,
  nullPosition: 5,
  nullPositionPlusMinus: 0.05,
  nullLevelDbc: -70,
  bracketed: true,
  side: 'short-of-null',
  nextPosition: 4.9,
  recommendedPosition: 4.9,
  recommendedLevelDbc: -69,
  recommendationNote: null,
  thermalMarginC: 20,
  excludedPoint: null,
  warnings: [],
  curve: [],
};
const point = (overrides: Partial<JudgedPoint> = {}): JudgedPoint => ({
  sequence: 5,
  position: 4.9,
  settled: true,
  inFit: true,
  stimulusHz: 14,
  reading: readingWithThd(-68),
  ...overrides,
});
const run = (final: Partial<JudgedPoint> = {}, a: Partial<TrimAssessment> & { fitProblem?: string | null } = {}): JudgedRun => ({
  trimPoints: [point({ sequence: 1, position: 0, reading: readingWithThd(-40) }), point(final)],
  assessment: { ...assessment, ...a },
});

describe('judgeTrimRun', () => {
  it('passes a trim that was done', () => {
    expect(judgeTrimRun(run(), TRIM)).toEqual({ verdict: 'pass', reasons: [] });
    // Half a step (0.125 turns) from the recommendation still counts as at it.
    expect(judgeTrimRun(run({ position: 4.9 - 0.125 }), TRIM).verdict).toBe('pass');
  });

  const failures: [string, JudgedRun, RegExp][] = [
    ['no point at all', { trimPoints: [], assessment: null }, /No trim point/],
    ['a fit that cannot be trusted', run({}, { fitProblem: 'the trimmer has no effect: check its wiring.' }), /null was not located: the trimmer has no effect/],
    ['no null estimate', run({}, { nullPosition: null, recommendedPosition: null }), /null was not located/],
    ['a null neither bracketed nor with an uncertainty', run({}, { bracketed: false, nullPositionPlusMinus: null }), /neither bracketed nor located/],
    ['no recommendation yet', run({}, { recommendedPosition: null, recommendationNote: 'record at 4.5 next.' }), /no recommended setting yet: record at 4\.5/],
    ['an unsettled final point', run({ settled: false, inFit: false }), /before its reading settled/],
    ['a final point out of the fit', run({ inFit: false }), /left out of the fit/],
    ['a final point of another stimulus (finding 1: 15.477 Hz for 14 Hz)', run({ stimulusHz: 15.477 }), /wrong stimulus/],
    ['a final reading that is not of the stimulus', run({ reading: readingWithThd(-90, { fundamental: { frequencyHz: 14, levelDbfs: -28, phaseDeg: 0 } }) }), /not a measurement of the stimulus/],
    ['the trimmer short of the recommendation by more than half a step', run({ position: 4.6 }), /left at 4\.60 turns, not at the recommended 4\.90/],
    ['the trimmer past the null', run({ position: 5.25 }, { side: 'past-null', recommendedPosition: 5.25 }), /past the null/],
    ['a warning at the final point', run({}, { warnings: [{ id: 'gain-rise', seen: 'gain up 1.2 dB', advice: 'turn back' }] }), /warning stands at the final point: gain up 1\.2 dB/],
    ['THD above the limit', run({ reading: readingWithThd(-59.9) }), /THD -59\.9 dB at the final point is above the limit of -60 dB/],
  ];
  for (const [what, judged, reason] of failures) {
    it(`fails ${what}, saying why`, () => {
      const result = judgeTrimRun(judged, TRIM);
      expect(result.verdict).toBe('fail');
      expect(result.reasons.some((r) => reason.test(r))).toBe(true);
    });
  }

  it('fails while a live warning stands uncleared', () => {
    const judged = { ...run(), openLiveWarnings: [{ id: 'lf-instability', seen: 'sub-audio up 22 dB' }] };
    expect(judgeTrimRun(judged, TRIM).reasons).toEqual(['A warning raised while watching has not cleared: sub-audio up 22 dB']);
  });
});
