import { describe, expect, it } from 'vitest';
import {
  chainNoiseFloor,
  DEFAULT_CHAIN_LIMITS,
  judgeChainCheck,
  type ChainCheckItemKind,
  type ChainCheckResult,
  type ChainLimits,
} from '../../shared/calibration/chain-check.ts';
import { chainResponse, type ChainResponse } from '../../shared/calibration/chain-response.ts';

// Hand-built limits, round numbers so each side of each limit is plain in the test.
const LIMITS: ChainLimits = {
  residualThdnAt1kHzMaxDb: -90,
  residualThdMaxDb: -95,
  residualThdLowFrequencyMaxDb: -85,
  lowFrequencyBelowHz: 100,
  noiseUnweightedMaxDbfs: -97,
  noiseAWeightedMaxDbfs: -100,
  noiseAWeightedMaxDbu: null,
  flatnessDb: 0.5,
  flatnessBandLowHz: 20,
  flatnessBandHighHz: 20000,
  requireLatency: true,
};

const THIRDS_20_TO_20K = [
  20, 25, 31.5, 40, 50, 63, 80, 100, 125, 160, 200, 250, 315, 400, 500, 630, 800, 1000, 1250, 1600, 2000, 2500, 3150, 4000,
  5000, 6300, 8000, 10000, 12500, 16000, 20000,
];

/** A response flat at −0.3 dB of gain except where `relative` says (dB from the 1 kHz step). */
function response(relative: Record<number, number> = {}, frequencies = THIRDS_20_TO_20K): ChainResponse {
  const outcome = chainResponse(frequencies.map((f) => ({ frequencyHz: f, generatorDbfs: -10, capturedDbfs: -10.3 + (relative[f] ?? 0) })));
  if (!outcome.ok) throw new Error(outcome.reason);
  return outcome.response;
}

function passingResult(): ChainCheckResult {
  return {
    schemaVersion: 1,
    measuredAt: '2026-12-02T14:30:00+00:00',
    sampleRateHz: 48000,
    inputDbuAtFullScale: null,
    residuals: [
      { frequencyHz: 14, generatorDbfs: -12, thdDb: -88, thdnDb: -80 },
      { frequencyHz: 1000, generatorDbfs: -1, thdDb: -105, thdnDb: -95 },
    ],
    noiseFloor: chainNoiseFloor({ bandLowHz: 20, bandHighHz: 20000, unweightedDbfs: -100, aWeightedDbfs: -103 }, null),
    response: response(),
    responseRefusal: null,
    latency: { latencySamples: 480, latencyMs: 10, confidence: 30, inverted: false },
    latencyRefusal: null,
  };
}

function item(result: ChainCheckResult, kind: ChainCheckItemKind, limits = LIMITS) {
  const judged = judgeChainCheck(result, limits);
  const found = judged.items.filter((i) => i.kind === kind);
  expect(found.length, `one ${kind} item`).toBe(1);
  return { ...found[0], overall: judged.pass };
}

describe('judgeChainCheck', () => {
  it('passes a result inside every limit, and is plain JSON data both ways', () => {
    const result = passingResult();
    expect(JSON.parse(JSON.stringify(result))).toEqual(result);
    const judged = judgeChainCheck(result, LIMITS);
    expect(judged.items.filter((i) => !i.pass)).toEqual([]);
    expect(judged.pass).toBe(true);
    expect(JSON.parse(JSON.stringify(judged))).toEqual(judged);
  });

  it.each([
    ['residual THD+N at 1 kHz', (r: ChainCheckResult, v: number) => (r.residuals[1].thdnDb = v), 'residual-thdn', -90],
    ['residual THD at 1 kHz', (r: ChainCheckResult, v: number) => (r.residuals[1].thdDb = v), 'residual-thd', -95],
    ['residual THD at 14 Hz (below 100 Hz)', (r: ChainCheckResult, v: number) => (r.residuals[0].thdDb = v), 'residual-thd', -85],
    ['unweighted noise', (r: ChainCheckResult, v: number) => (r.noiseFloor!.unweightedDbfs = v), 'noise-unweighted', -97],
    ['A-weighted noise', (r: ChainCheckResult, v: number) => (r.noiseFloor!.aWeightedDbfs = v), 'noise-a-weighted', -100],
  ] as const)('%s: 0.5 dB under its limit passes, 0.5 dB over fails, with the value and the limit', (_, set, kind, limit) => {
    for (const [value, pass] of [
      [limit - 0.5, true],
      [limit + 0.5, false],
    ] as const) {
      const result = passingResult();
      set(result, value);
      const judged = judgeChainCheck(result, LIMITS);
      const failing = judged.items.filter((i) => !i.pass);
      expect(judged.pass).toBe(pass);
      expect(failing.length).toBe(pass ? 0 : 1);
      const hit = judged.items.find((i) => i.kind === kind && i.value === value)!;
      expect(hit.pass).toBe(pass);
      expect(hit.limit).toBe(limit);
      expect(hit.reason).toMatch(pass ? /at or below/ : /is above/);
    }
  });

  it('a THD at 14 Hz that would fail the 1 kHz limit passes the low-frequency one (−88 dB: above −95, below −85)', () => {
    const low = judgeChainCheck(passingResult(), LIMITS).items.find((i) => i.label.startsWith('Residual THD at 14 Hz'))!;
    expect(low.limit).toBe(-85);
    expect(low.pass).toBe(true);
  });

  it.each([
    [-0.45, true],
    [-0.55, false],
    [0.55, false],
  ])('flatness: a 20 Hz point %s dB from 1 kHz against ±0.5 dB passes: %s', (deviation, pass) => {
    const result = { ...passingResult(), response: response({ 20: deviation }) };
    const flat = item(result, 'response-flatness');
    expect(flat.pass).toBe(pass);
    expect(flat.value).toBeCloseTo(Math.abs(deviation), 9);
    expect(flat.limit).toBe(0.5);
    expect(flat.overall).toBe(pass);
  });

  it('flatness: a point outside the band (10 Hz, −3 dB) does not count; one at the band\'s top (20 kHz) does', () => {
    const withTen = response({ 10: -3 }, [10, ...THIRDS_20_TO_20K]);
    expect(item({ ...passingResult(), response: withTen }, 'response-flatness').pass).toBe(true);
    expect(item({ ...passingResult(), response: response({ 20000: -0.6 }) }, 'response-flatness').pass).toBe(false);
  });

  it('flatness at 44.1 kHz is judged up to 16 kHz, the highest step below 0.45 × 44.1 kHz; a sweep stopping at 12.5 kHz fails as incomplete', () => {
    const upTo16k = THIRDS_20_TO_20K.filter((f) => f <= 16000);
    expect(item({ ...passingResult(), sampleRateHz: 44100, response: response({}, upTo16k) }, 'response-flatness').pass).toBe(true);
    const short = item({ ...passingResult(), sampleRateHz: 44100, response: response({}, upTo16k.filter((f) => f <= 12500)) }, 'response-flatness');
    expect(short.pass).toBe(false);
    expect(short.reason).toMatch(/16000 Hz/);
  });

  it('fails an unmeasured response with the refusal as its reason', () => {
    const flat = item({ ...passingResult(), response: null, responseRefusal: 'No step lies within 5 % of 1000 Hz' }, 'response-flatness');
    expect(flat.pass).toBe(false);
    expect(flat.value).toBeNull();
    expect(flat.reason).toMatch(/1000 Hz/);
  });

  it('fails a missing latency with its refusal, unless the limits do not require one', () => {
    const result = { ...passingResult(), latency: null, latencyRefusal: 'The capture does not match the stimulus' };
    const latency = item(result, 'latency');
    expect(latency.pass).toBe(false);
    expect(latency.reason).toMatch(/does not match/);
    expect(judgeChainCheck(result, { ...LIMITS, requireLatency: false }).pass).toBe(true);
  });

  it('fails a check without a 1 kHz residual and without a noise floor, saying what was not measured', () => {
    const result = { ...passingResult(), residuals: [passingResult().residuals[0]], noiseFloor: null };
    const judged = judgeChainCheck(result, LIMITS);
    expect(judged.pass).toBe(false);
    expect(judged.items.find((i) => i.kind === 'residual-thdn')!.reason).toMatch(/1 kHz/);
    expect(judged.items.find((i) => i.kind === 'noise-a-weighted')!.reason).toMatch(/not measured/);
  });

  it('A-weighted floor in dBu: dBu = dBFS + the dBu at 0 dBFS (AES17 levels are relative to full scale); judged against a dBu limit on both sides', () => {
    // Input calibrated at +18 dBu for 0 dBFS: −103 dBFS(A) is −85 dBu(A).
    const floor = chainNoiseFloor({ bandLowHz: 20, bandHighHz: 20000, unweightedDbfs: -100, aWeightedDbfs: -103 }, { dbuAtFullScale: 18 });
    expect(floor.aWeightedDbu).toBeCloseTo(-85, 12);
    expect(floor.unweightedDbu).toBeCloseTo(-82, 12);
    const result = { ...passingResult(), inputDbuAtFullScale: 18, noiseFloor: floor };
    expect(item(result, 'noise-a-weighted-dbu', { ...LIMITS, noiseAWeightedMaxDbu: -84.5 }).pass).toBe(true);
    expect(item(result, 'noise-a-weighted-dbu', { ...LIMITS, noiseAWeightedMaxDbu: -85.5 }).pass).toBe(false);
    // Uncalibrated: no dBu figure, so a dBu limit cannot be met.
    expect(item(passingResult(), 'noise-a-weighted-dbu', { ...LIMITS, noiseAWeightedMaxDbu: -80 }).reason).toMatch(/not calibrated/);
  });

  it('defaults: residual THD+N at 1 kHz −90 dB (issue 9) and flatness ±0.5 dB over 20 Hz–20 kHz (common practice, from memory)', () => {
    expect(DEFAULT_CHAIN_LIMITS.residualThdnAt1kHzMaxDb).toBe(-90);
    expect(DEFAULT_CHAIN_LIMITS.flatnessDb).toBe(0.5);
    expect([DEFAULT_CHAIN_LIMITS.flatnessBandLowHz, DEFAULT_CHAIN_LIMITS.flatnessBandHighHz]).toEqual([20, 20000]);
    expect(judgeChainCheck(passingResult()).pass).toBe(true);
  });
});
