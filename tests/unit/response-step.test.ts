// The response check step: its mask judged on the response of known analytic filters applied to
// the step's own sweep, its harmonic limits on a memoryless polynomial, and the captures it refuses.

import { describe, expect, it } from 'vitest';
import { logSweep, logSweepLayout, type LogSweepSpec } from '../../shared/dsp/log-sweep.ts';
import { analyzeSweepResponse, type SweepResponse } from '../../shared/measurement/sweep-response.ts';
import { checkProcedureFile, type ProcedureFile } from '../../shared/procedures/procedure-file.ts';
import { correctByChain, judgeResponse, maskBoundsAt, maskMargin, sweepSpecFor, whyCaptureUnusable, type ResponseStep } from '../../shared/procedures/response.ts';
import { butterworthHighPass2, filtered, rcLowPass } from '../support/analogue-filters.ts';

const RATE = 48000;
const STEP: ResponseStep = {
  id: 'response',
  title: 'Frequency response',
  instructions: ['Leave the unit connected as for the checks.'],
  kind: 'response',
  fromHz: 20,
  toHz: 22000,
  durationS: 7,
  level: { value: -6, unit: 'dBFS' },
  referenceHz: 1000,
  mask: [
    { frequencyHz: 20, lowDb: -1 },
    { frequencyHz: 20000, lowDb: -1 },
  ],
  onFail: 'continue',
};
const specOf = (step: ResponseStep): LogSweepSpec => {
  const plan = sweepSpecFor(step, RATE, null);
  if (!plan.ok) throw new Error(plan.refusal);
  return plan.spec;
};
const SPEC = specOf(STEP);

function analysed(capture: ArrayLike<number>): SweepResponse {
  const outcome = analyzeSweepResponse(capture, SPEC, { fromHz: STEP.fromHz, toHz: STEP.toHz, referenceHz: STEP.referenceHz });
  if (!outcome.ok) throw new Error(outcome.reason);
  return outcome.result;
}
const flatLowMask = (fromHz: number, toHz: number, lowDb: number): ResponseStep['mask'] => [
  { frequencyHz: fromHz, lowDb },
  { frequencyHz: toHz, lowDb },
];
const judged = (response: SweepResponse, step: Partial<ResponseStep>) => judgeResponse({ ...STEP, ...step }, response, { corrected: false, note: 'test' });

describe('the mask', () => {
  it('is linear in log frequency between its points: halfway between 20 Hz and 2 kHz lies at 200 Hz, their geometric mean', () => {
    const mask = [
      { frequencyHz: 20, lowDb: -3, highDb: 1 },
      { frequencyHz: 2000, lowDb: -1, highDb: 0 },
    ];
    expect(maskBoundsAt(mask, 200)?.low).toBeCloseTo(-2, 12);
    expect(maskBoundsAt(mask, 200)?.high).toBeCloseTo(0.5, 12);
    // Outside its span it says nothing: the step's band may be wider than the mask.
    expect(maskBoundsAt(mask, 19.9)).toBeNull();
    expect(maskBoundsAt(mask, 2001)).toBeNull();
  });

  it('measures the smallest distance inside it, where the response comes closest, on straight lines in log f', () => {
    // A response falling 1 dB per decade against a flat −2 dB floor: closest at its lowest point.
    const response = [20, 200, 2000].map((f) => ({ frequencyHz: f, levelDb: -Math.log10(2000 / f) }));
    const worst = maskMargin(flatLowMask(40, 2000, -2), response);
    // At 40 Hz the line reads −log10(50) = −1.699 dB: 0.301 dB above −2 dB.
    expect(worst?.atHz).toBe(40);
    expect(worst?.marginDb).toBeCloseTo(2 - Math.log10(50), 12);
  });
});

describe('judging a response step on analytic filters applied to its sweep', () => {
  const sweep = logSweep(SPEC);

  it('a second-order high-pass at 20 Hz (|H|² = x⁴/(1 + x⁴), Butterworth) crosses −1 dB where the formula says: a −1 dB floor from just above passes, from just below fails', () => {
    const response = analysed(filtered(sweep, RATE, butterworthHighPass2(20), 333));
    // |H|² = 10^(−0.1) ⇒ x⁴ = r/(1 − r): the −1 dB point, 28.0 Hz (1 kHz lies 0.000 dB from the passband).
    const r = 10 ** -0.1;
    const crossingHz = 20 * (r / (1 - r)) ** 0.25;
    expect(crossingHz).toBeCloseTo(28.04, 1);
    const above = judged(response, { mask: flatLowMask(crossingHz * 1.03, 20000, -1) });
    const below = judged(response, { mask: flatLowMask(crossingHz / 1.03, 20000, -1) });
    expect(above.verdict).toBe('pass');
    expect(below.verdict).toBe('fail');
    expect(below.reasons[0]).toMatch(/leaves its mask/);
    // The margin at the mask's first point is the formula's level there plus 1 dB, within the 0.05 dB the analysis holds.
    const levelDb = (f: number) => 10 * Math.log10((f / 20) ** 4 / (1 + (f / 20) ** 4));
    const m = above.measurements.find((x) => x.quantity === 'maskMarginDb');
    expect(m?.value).toBeCloseTo(levelDb(crossingHz * 1.03) + 1, 1);
    expect(Math.abs((m?.value as number) - (levelDb(crossingHz * 1.03) + 1))).toBeLessThan(0.05);
  }, 60_000);

  it('a first-order RC low-pass at 20 kHz (|H| = 1/√(1 + (f/fc)²)) crosses −1 dB re 1 kHz where the formula says, with a band on both sides', () => {
    const response = analysed(filtered(sweep, RATE, rcLowPass(20000), 0));
    // (1 + (1/20)²)/(1 + x²) = 10^(−0.1): x = 0.512, 10.24 kHz.
    const crossingHz = 20000 * Math.sqrt((1 + (1000 / 20000) ** 2) / 10 ** -0.1 - 1);
    expect(crossingHz).toBeCloseTo(10240, -1);
    const both = (toHz: number): ResponseStep['mask'] => [
      { frequencyHz: 20, lowDb: -1, highDb: 0.5 },
      { frequencyHz: toHz, lowDb: -1, highDb: 0.5 },
    ];
    expect(judged(response, { mask: both(crossingHz / 1.03) }).verdict).toBe('pass');
    const failed = judged(response, { mask: both(crossingHz * 1.03) });
    expect(failed.verdict).toBe('fail');
    expect(failed.measurements[0].note).toMatch(/^response −1\.0\d dB at 10\.5 kHz, below its low bound of −1\.00 dB/);
    // A ceiling just under the passband's level (+0.01 dB at 20 Hz re 1 kHz) fails on the high side.
    const ceiling = judged(response, { mask: [{ frequencyHz: 20, highDb: -0.05 }, { frequencyHz: 500, highDb: -0.05 }] });
    expect(ceiling.verdict).toBe('fail');
    expect(ceiling.measurements[0].note).toMatch(/above its high bound of −0\.05 dB/);
  }, 60_000);

  it('judges H2 by its worst level over the band: y = x + a2·x² gives H2 = a2·A/2 re the fundamental (sin² = (1 − cos 2θ)/2)', () => {
    // The products must stay below Nyquist unaliased (a sampled polynomial folds 2f above 24 kHz back into the band): 2 × 6 kHz = 12 kHz.
    const step: ResponseStep = { ...STEP, fromHz: 20, toHz: 6000, durationS: 5, mask: flatLowMask(20, 6000, -1) };
    const spec = specOf(step);
    const a2 = 0.01;
    const outcome = analyzeSweepResponse(Float64Array.from(logSweep(spec), (x) => x + a2 * x * x), spec, { referenceHz: 1000 });
    if (!outcome.ok) throw new Error(outcome.reason);
    const A = 10 ** (spec.levelDbfs / 20);
    const h2Dbc = 20 * Math.log10((a2 * A) / 2);
    const limit = (high: number) => ({ harmonicsDbc: { H2: { high, unit: 'dBc' as const } } });
    const judge = (limits: ResponseStep['limits']) => judgeResponse({ ...step, limits }, outcome.result, { corrected: false, note: 'test' });
    const pass = judge(limit(h2Dbc + 0.5));
    const fail = judge(limit(h2Dbc - 0.5));
    expect(pass.reasons).toEqual([]);
    expect(pass.verdict).toBe('pass');
    expect(fail.verdict).toBe('fail');
    expect(fail.reasons[0]).toMatch(/^H2 reaches −?-?\d+\.\d dBc, above the high limit/);
    const h2 = pass.measurements.find((m) => m.quantity === 'harmonicsDbc.H2');
    expect(Math.abs((h2?.value as number) - h2Dbc)).toBeLessThan(0.5);
    // H3 of a purely quadratic stage is nothing but the floor: read, and far below the limit.
    const h3 = judge({ harmonicsDbc: { H3: { high: -60, unit: 'dBc' } } });
    expect(h3.measurements.find((m) => m.quantity === 'harmonicsDbc.H3')?.value).toBeLessThan(-60);
    // A limited order the sweep cannot resolve has no value, and fails: unmeasured is not met.
    const unresolved = judgeResponse({ ...step, limits: limit(0) }, { ...outcome.result, harmonics: [], unresolved: [{ order: 2, reason: 'the sweep is too short' }] }, { corrected: false, note: 'test' });
    expect(unresolved.verdict).toBe('fail');
    expect(unresolved.reasons[0]).toMatch(/H2 was not measured: the sweep is too short/);
  }, 60_000);
});

describe('what a response step refuses', () => {
  const expected = 10 ** (SPEC.levelDbfs / 20);

  it('a clipped capture (full scale is ±1.0 in a float capture) and one 20 dB or more below the level played (common practice: a sanity window)', () => {
    const sweep = logSweep(SPEC);
    expect(whyCaptureUnusable(sweep, SPEC, expected)).toBeNull();
    const clipped = Float32Array.from(sweep, (x) => Math.max(-1, Math.min(1, 3 * x)));
    expect(whyCaptureUnusable(clipped, SPEC, expected)).toMatch(/clipped/);
    expect(whyCaptureUnusable(new Float32Array(sweep.length), SPEC, expected)).toMatch(/does not reach the input/);
    expect(whyCaptureUnusable(Float32Array.from(sweep, (x) => x * 0.09), SPEC, expected)).toMatch(/21 dB below/);
    expect(whyCaptureUnusable(sweep.subarray(0, sweep.length - 10), SPEC, expected)).toMatch(/less than/);
  });

  it('a sweep the station cannot play at its rate: its fade a twelfth of an octave above 22 kHz passes Nyquist at 44.1 kHz (22 050 / 2^(1/12) = 20 812 Hz)', () => {
    const plan = sweepSpecFor(STEP, 44100, null);
    expect(plan.ok).toBe(false);
    if (!plan.ok) expect(plan.refusal).toMatch(/cannot sweep at 44100 Hz sampling: .*at most at 20812 Hz/);
    expect(sweepSpecFor({ ...STEP, toHz: 20000 }, 44100, null).ok).toBe(true);
    // A dBu level needs the output's calibration: refused without it, converted with it (dBFS = dBu − the output's dBu at full scale).
    const inDbu: ResponseStep = { ...STEP, level: { value: 4, unit: 'dBu' } };
    expect(sweepSpecFor(inDbu, RATE, null)).toMatchObject({ ok: false, refusal: expect.stringMatching(/no calibration that holds/) });
    expect(sweepSpecFor(inDbu, RATE, { outputDbuAtFullScale: 18, inputDbuAtFullScale: 18 })).toMatchObject({ ok: true, spec: { levelDbfs: -14 }, levelDbu: 4 });
  });

  it('a sweep too short to read its band’s start closely: 12 cycles of fromHz in the room L·ln 2 before H2 (Farina 2000 spacing; the count is the station’s own rule, docs/procedures.md)', () => {
    const file = (durationS: number): ProcedureFile => ({
      schemaVersion: 2,
      code: 'T-1',
      revision: 'A',
      title: 'Test',
      invented: true,
      model: { code: 'M', name: 'M', maker: 'Invented', channels: 1 },
      serial: { pattern: '^X$', example: 'X' },
      requiresCalibration: false,
      steps: [
        { id: 'safety', title: 'Safety', kind: 'notice', instructions: ['Mute monitors.'], acknowledgement: 'Done.' },
        { ...STEP, durationS },
      ],
    });
    // T ≥ 12/f1/ln 2 · ln(f2/f1): 20 Hz to 22 kHz needs 0.8656 · 7.003 = 6.06 s.
    const needed = (12 / 20 / Math.LN2) * Math.log(22000 / 20);
    expect(needed).toBeCloseTo(6.06, 2);
    expect(checkProcedureFile(JSON.stringify(file(6.1))).ok).toBe(true);
    const short = checkProcedureFile(JSON.stringify(file(6.0)));
    expect(short.ok).toBe(false);
    if (!short.ok) expect(short.problems).toContainEqual({ path: 'steps[1].durationS', message: expect.stringMatching(/at least 6\.1 s/) });
  });

  it('a mask outside the band, out of order, or with its bounds given at some points only', () => {
    const bad = (mask: ResponseStep['mask']) => {
      const check = checkProcedureFile(
        JSON.stringify({
          schemaVersion: 2,
          code: 'T-1',
          revision: 'A',
          title: 'Test',
          invented: true,
          model: { code: 'M', name: 'M', maker: 'Invented', channels: 1 },
          serial: { pattern: '^X$', example: 'X' },
          requiresCalibration: false,
          steps: [{ id: 'safety', title: 'Safety', kind: 'notice', instructions: ['Mute monitors.'], acknowledgement: 'Done.' }, { ...STEP, mask }],
        }),
      );
      return check.ok ? [] : check.problems.map((p) => `${p.path}: ${p.message}`);
    };
    expect(bad(STEP.mask)).toEqual([]);
    expect(bad([{ frequencyHz: 5, lowDb: -1 }, { frequencyHz: 100, lowDb: -1 }])[0]).toMatch(/mask\[0\]\.frequencyHz: must lie inside the band/);
    expect(bad([{ frequencyHz: 100, lowDb: -1 }, { frequencyHz: 50, lowDb: -1 }])[0]).toMatch(/mask\[1\]\.frequencyHz: the points must go up/);
    expect(bad([{ frequencyHz: 50, lowDb: -1 }, { frequencyHz: 100, highDb: 1 }])[0]).toMatch(/same bounds/);
  });
});

describe('correction by the chain response', () => {
  it('takes the chain out relative to the reference: a chain 0.3 dB down at 20 Hz leaves a flat unit flat (L − (C(f) − C(ref)))', () => {
    const flat: SweepResponse = {
      latencySamples: 0,
      referenceHz: 1000,
      response: [20, 1000, 20000].map((f) => ({ frequencyHz: f, levelDb: f === 20 ? -0.3 : 0, phaseDeg: 0 })),
      harmonics: [],
      unresolved: [],
    };
    const point = (frequencyHz: number, relativeDb: number) => ({ frequencyHz, generatorDbfs: -10, capturedDbfs: -10 + relativeDb, gainDb: relativeDb, relativeDb });
    const chain = { referenceHz: 1000, referenceGainDb: 0, points: [point(20, -0.3), point(1000, 0), point(20000, 0)] };
    const corrected = correctByChain(flat, chain);
    expect(corrected.ok).toBe(true);
    if (corrected.ok) for (const p of corrected.response.response) expect(p.levelDb).toBeCloseTo(0, 12);
    // A chain measured from 25 Hz cannot correct a band from 20 Hz: not extrapolated.
    const narrow = correctByChain(flat, { ...chain, points: [point(25, -0.3), point(1000, 0), point(20000, 0)] });
    expect(narrow.ok).toBe(false);
  });
});

it('layout: the step plays the same samples as the offline sweep writer for its parameters', () => {
  // sweep --write uses logSweep with the same spec: one function, one array. The station starts the
  // sweep an octave below the band at the band's own sweep rate (docs/procedures.md, `response`):
  // 7 s for 20 Hz–22 kHz (ln 1100) becomes 7·ln 2200/ln 1100 s from 10 Hz.
  const layout = logSweepLayout(SPEC);
  expect(SPEC.startHz).toBe(10);
  expect(SPEC.durationS).toBeCloseTo((7 * Math.log(2200)) / Math.log(1100), 12);
  expect(SPEC).toMatchObject({ endHz: 22000, sampleRateHz: RATE, levelDbfs: -6 });
  expect(logSweep(SPEC).length).toBe(layout.totalLength);
});

describe('the bottom of the band, where a transformer stage rolls off and distorts most', () => {
  // The shortest sweep the schema allows for 20 Hz–20 kHz (docs/procedures.md: 12/fromHz/ln 2 × ln(toHz/fromHz) = 5.98 s).
  const band: ResponseStep = { ...STEP, fromHz: 20, toHz: 20000, durationS: 6, mask: flatLowMask(20, 20000, -3.2) };
  const spec = specOf(band);
  const read = (capture: ArrayLike<number>) => {
    const outcome = analyzeSweepResponse(capture, spec, { fromHz: band.fromHz, toHz: band.toHz, referenceHz: band.referenceHz });
    if (!outcome.ok) throw new Error(outcome.reason);
    return outcome.result;
  };

  it('reads a second-order Butterworth high-pass at its corner as −3.01 dB (|H|² = 1/2 at fc) within 0.05 dB, even on the shortest sweep', () => {
    const response = read(filtered(logSweep(spec), RATE, butterworthHighPass2(20), 200));
    const at20 = response.response.find((p) => Math.abs(p.frequencyHz - 20) < 1e-6)!;
    expect(Math.abs(at20.levelDb - 10 * Math.log10(0.5))).toBeLessThan(0.05);
    // A mask 0.2 dB looser than the corner's level passes; one 0.2 dB tighter must fail.
    expect(judgeResponse({ ...band, mask: flatLowMask(20, 20000, -3.21) }, response, { corrected: false, note: 'test' }).verdict).toBe('pass');
    expect(judgeResponse({ ...band, mask: flatLowMask(20, 20000, -2.81) }, response, { corrected: false, note: 'test' }).verdict).toBe('fail');
  }, 60_000);

  it('fails a harmonic limit that the sweep could read only above the band’s start, rather than judging the worst of what is left', () => {
    const response = read(logSweep(spec));
    // The same analysis with H3 readable only from 30 Hz up: half an octave of the band unread.
    const cut: SweepResponse = { ...response, harmonics: response.harmonics.map((h) => (h.order === 3 ? { ...h, points: h.points.filter((p) => p.frequencyHz >= 30) } : h)) };
    const step = { ...band, limits: { harmonicsDbc: { H3: { high: -40, unit: 'dBc' as const } } } };
    const judgedCut = judgeResponse(step, cut, { corrected: false, note: 'test' });
    expect(judgedCut.verdict).toBe('fail');
    const h3 = judgedCut.measurements.find((m) => m.quantity === 'harmonicsDbc.H3')!;
    expect(h3.value).toBeNull();
    expect(h3.note).toMatch(/not from 20\.0 Hz/);
    // Read from the band's start (the sweep began an octave lower), a clean sweep's H3 is far under −40 dBc: a pass.
    expect(response.harmonics.find((h) => h.order === 3)!.points[0].frequencyHz).toBeLessThanOrEqual(20 * 2 ** (1 / 12));
    expect(judgeResponse(step, response, { corrected: false, note: 'test' }).verdict).toBe('pass');
  }, 60_000);
});
