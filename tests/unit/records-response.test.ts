// The response step recorded in main: the capture is analysed there with the sweep of the stored
// revision's step, refused when it is not the unit's answer to that sweep, and judged against the
// step's mask and harmonic limits; the curve is stored with the result for its plot.
//
// Expected values come from outside the code: the units are analytic filters applied to the sweep
// (a second-order Butterworth high-pass, |H|² = x⁴/(1 + x⁴), any filter textbook), a float capture
// clips at ±1.0 (full scale), and a capture 20 dB under the level played is not a unity-gain stage's
// answer (common practice: a sanity window).

import { readFileSync, writeFileSync } from 'node:fs';
import { join } from 'node:path';
import { fileURLToPath } from 'node:url';
import { afterEach, beforeEach, describe, expect, it } from 'vitest';
import { openStation } from '../../electron/services/station.ts';
import { logSweep, type LogSweepSpec } from '../../shared/dsp/log-sweep.ts';
import type { RunDetail } from '../../shared/ipc/contract.ts';
import { accepted, noCaller, refusedWith, tempDir, TEST_SETUP } from '../support/station.ts';
import { butterworthHighPass2, filtered, type AnalogueResponse } from '../support/analogue-filters.ts';
import { ISO_266_THIRD_OCTAVE_HZ } from '../../shared/calibration/chain-response.ts';

const RATE = 48000;
/** From 20 Hz to 20 kHz: at least (4 / 20 Hz / ln 2)·ln(1000) = 2.0 s resolves 20 Hz. */
const responseStep = (durationS: number) => ({
  id: 'response',
  title: 'Frequency response',
  instructions: ['Leave the unit connected as for the checks.'],
  kind: 'response',
  fromHz: 20,
  toHz: 20000,
  durationS,
  level: { value: -10, unit: 'dBFS' },
  referenceHz: 1000,
  // Within ±0.5 dB of 1 kHz from 20 Hz to 20 kHz (common practice for a transformer output stage).
  mask: [
    { frequencyHz: 20, lowDb: -0.5, highDb: 0.5 },
    { frequencyHz: 20000, lowDb: -0.5, highDb: 0.5 },
  ],
  limits: { harmonicsDbc: { H3: { high: -60, unit: 'dBc' } } },
  onFail: 'continue',
});
/** This Trimbench runs procedures with a trim step: the demo file's, after the response step. */
const TRIM_STEP = JSON.parse(readFileSync(fileURLToPath(new URL('../../resources/procedures/mg20-lf-trim.json', import.meta.url)), 'utf8')).steps.find((s: { kind: string }) => s.kind === 'trim');
const procedure = (revision: string, durationS: number, requiresCalibration = false) => ({
  schemaVersion: 2,
  code: 'RESP-TEST',
  revision,
  title: 'Response test (invented)',
  invented: true,
  model: { code: 'X1', name: 'Invented stage', maker: 'Invented', channels: 1 },
  serial: { pattern: '^X1-\\d{4}$', example: 'X1-0001' },
  requiresCalibration,
  steps: [{ id: 'safety', title: 'Safety', kind: 'notice', instructions: ['Mute monitors.'], acknowledgement: 'Monitors are muted.' }, responseStep(durationS), TRIM_STEP],
});
// The station sweeps from an octave below the band (20 Hz) at the band's own sweep rate (docs/procedures.md, `response`).
const specOf = (durationS: number, rate = RATE): LogSweepSpec => ({ startHz: 10, endHz: 20000, durationS: (durationS * Math.log(2000)) / Math.log(1000), sampleRateHz: rate, levelDbfs: -10 });

let dir: ReturnType<typeof tempDir>;
let station: ReturnType<typeof openStation>;
const call = <T = RunDetail>(channel: string, payload: unknown, caller = noCaller) => accepted<T>(station.handlers, channel, payload, caller);
const refusal = (channel: string, payload: unknown) => refusedWith(station.handlers, channel, payload);
const open = () => openStation({ dataDir: dir.path, stationName: 'bench-7', log: { record: () => '' } });

async function importFile(file: object): Promise<number> {
  const path = join(dir.path, `${Math.random()}.json`);
  writeFileSync(path, JSON.stringify(file));
  return (await call<{ id: number }>('importProcedure', {}, { ...noCaller, chooseProcedureFile: async () => path })).id;
}
async function atResponseStep(procedureId: number, serial: string): Promise<number> {
  const runId = (await call('openRun', { serial, procedureId, operator: 'A. Tester', setup: TEST_SETUP })).run.id;
  await call('acknowledgeNotice', { runId, stepId: 'safety' });
  return runId;
}
/** The unit: a second-order high-pass at `cornerHz`, 480 samples of latency. */
const unit = (spec: LogSweepSpec, cornerHz: number) => Array.from(filtered(logSweep(spec), spec.sampleRateHz, butterworthHighPass2(cornerHz), 480));
const record = (runId: number, samples: number[], sampleRateHz = RATE) => ({ runId, stepId: 'response', sampleRateHz, samples, setup: { ...TEST_SETUP, sampleRateHz } });

beforeEach(() => {
  dir = tempDir('trimbench-response-');
  station = open();
});
afterEach(() => {
  station.close();
  dir.remove();
});

describe('recordResponse', () => {
  it('passes a stage that stays inside the mask and fails one that leaves it, at the frequency the formula says; the curve is kept', async () => {
    const id = await importFile(procedure('A', 6));
    // Corner at 5 Hz: |H(20 Hz)|² = 256/257, −0.017 dB. Corner at 40 Hz: x = 0.5, −12.3 dB at 20 Hz.
    const good = await atResponseStep(id, 'X1-0001');
    const passed = await call('recordResponse', record(good, unit(specOf(6), 5)));
    const result = passed.stepResults.at(-1)!;
    expect(result).toMatchObject({ stepId: 'response', kind: 'response', verdict: 'pass' });
    expect(result.measurements.map((m) => [m.quantity, m.low, m.high, m.verdict])).toEqual([
      ['maskMarginDb', 0, null, 'pass'],
      ['harmonicsDbc.H3', null, -60, 'pass'],
    ]);
    expect(result.measurements[0].note).toMatch(/closest to its (low|high) bound of [−+]?0\.50 dB; not corrected for the station's own response: the run has no calibration$/);
    expect(result.curve).toMatchObject({ referenceHz: 1000, latencySamples: 480, sampleRateHz: RATE, corrected: false });
    const at20 = result.curve!.response[0];
    expect(at20[0]).toBeCloseTo(20, 6);
    expect(Math.abs(at20[1] - 10 * Math.log10(256 / 257))).toBeLessThan(0.05);
    // Its phase, the 480-sample delay removed: H(s) = s²/(s² + √2·s + 1) at x = f/fc gives
    // 180° − atan2(√2·x, 1 − x²): +20.7° at 20 Hz for a 5 Hz corner (Butterworth, any filter handbook).
    const butterPhase = (f: number) => 180 - (Math.atan2(Math.SQRT2 * (f / 5), 1 - (f / 5) ** 2) * 180) / Math.PI;
    expect(butterPhase(20)).toBeCloseTo(20.7, 1);
    expect(Math.abs(at20[2] - butterPhase(20))).toBeLessThan(1);
    expect(passed.judgement.steps.map((st) => st.status)).toEqual(['pass', 'pass', 'not-run']);

    const bad = await atResponseStep(id, 'X1-0002');
    const failed = (await call('recordResponse', record(bad, unit(specOf(6), 40)))).stepResults.at(-1)!;
    expect(failed.verdict).toBe('fail');
    // −0.5 dB where x⁴/(1 + x⁴) = 10^(−0.05): x = 1.69, 67.7 Hz; below it the stage is outside the mask.
    const x = ((10 ** -0.05) / (1 - 10 ** -0.05)) ** 0.25;
    expect(x * 40).toBeCloseTo(67.7, 1);
    const below = failed.curve!.response.filter(([, db]) => db < -0.5).map(([f]) => f);
    expect(Math.max(...below)).toBeLessThan(x * 40);
    expect(Math.max(...below)).toBeGreaterThan((x * 40) / 2 ** (1 / 12));
    expect(failed.reasons[0]).toMatch(/leaves its mask by 1[12]\.\d\d dB: response −1[12]\.\d\d dB at 20\.0 Hz, below its low bound of −0\.50 dB\.$/);

    // Read back after a restart, as stored.
    station.close();
    station = open();
    expect(station.records.getRun(bad).stepResults.at(-1)).toEqual(failed);
  }, 120_000);

  it('refuses a capture of another sweep, at another rate, clipped or silent, and stores nothing', async () => {
    const id = await importFile(procedure('A', 6));
    const runId = await atResponseStep(id, 'X1-0003');
    const padded = (samples: number[], to: number) => [...samples, ...Array<number>(Math.max(0, to - samples.length)).fill(0)];
    const length = unit(specOf(6), 5).length;
    // Another sweep: 3.05 s instead of 3 s.
    expect(await refusal('recordResponse', record(runId, unit(specOf(6.05), 5).slice(0, length)))).toMatch(/does not follow this sweep/);
    // Played at 44.1 kHz, said to be 48 kHz: every frequency lies 8 % off.
    expect(await refusal('recordResponse', record(runId, padded(unit(specOf(6, 44100), 5), length)))).toMatch(/does not (follow|hold) (this|the) sweep/);
    // Clipped: the same stage driven 20 dB harder into an input that stops at full scale.
    expect(await refusal('recordResponse', record(runId, unit(specOf(6), 5).map((v) => Math.max(-1, Math.min(1, 10 * v)))))).toMatch(/input clipped/);
    expect(await refusal('recordResponse', record(runId, Array<number>(length).fill(0)))).toMatch(/does not reach the input/);
    // A setup at another rate than the capture says.
    expect(await refusal('recordResponse', { ...record(runId, unit(specOf(6), 5)), setup: { ...TEST_SETUP, sampleRateHz: 44100 } })).toMatch(/audio setup runs at 44100 Hz/);
    expect(await refusal('recordResponse', record(runId, [...unit(specOf(6), 5), Number.NaN]))).toMatch(/request to record the frequency response/);
    expect(station.records.getRun(runId).stepResults.filter((r) => r.stepId === 'response')).toEqual([]);
  }, 120_000);

  it('analyses with the sweep of the revision the run follows, never a newer one', async () => {
    const a = await importFile(procedure('A', 6));
    const runId = await atResponseStep(a, 'X1-0004');
    await importFile(procedure('B', 7));
    // Revision B sweeps for 7 s; the run follows A (6 s). A's analysis either finds B's sweep not its
    // own or finds it so late that the capture ends before A's sweep would have: refused either way.
    const ofB = unit(specOf(7), 5);
    expect(await refusal('recordResponse', record(runId, ofB.slice(0, unit(specOf(6), 5).length + RATE / 2)))).toMatch(/does not follow this sweep|capture ends .* before the sweep did/);
    expect((await call('recordResponse', record(runId, unit(specOf(6), 5)))).stepResults.at(-1)!.verdict).toBe('pass');
  }, 120_000);

  it('refuses an uncorrected response when the procedure requires calibration and the run has no chain response', async () => {
    await call('recordCalibration', {
      operator: 'A. Tester',
      setup: TEST_SETUP,
      output: { referenceHz: 1000, referenceDbfs: -20, meterEntry: '0.7746 V' },
      input: { method: 'loopback', generatorDbfs: -20, capturedDbfs: -20, capturedHz: 1000.2 },
    });
    const id = await importFile(procedure('A', 6, true));
    const runId = await atResponseStep(id, 'X1-0005');
    expect(await refusal('recordResponse', record(runId, unit(specOf(6), 5)))).toMatch(/requires a calibrated station.*no chain check with a frequency response.*Run the chain check/);
  }, 120_000);

  it('takes the station’s chain out of the response when the run’s chain check measured it: a 4 Hz first-order coupling in the interface leaves the unit’s own response', async () => {
    // The interface: a first-order high-pass at 4 Hz, |C|² = x²/(1 + x²) (any circuits textbook);
    // the unit: the second-order high-pass at 5 Hz. In the capture both act; main takes C out.
    const chainDb = (f: number) => 10 * Math.log10((f / 4) ** 2 / (1 + (f / 4) ** 2));
    const clock = Date.now();
    const { calibration } = await call<{ calibration: { id: number } }>('recordCalibration', {
      operator: 'A. Tester',
      setup: TEST_SETUP,
      output: { referenceHz: 1000, referenceDbfs: -20, meterEntry: '0.7746 V' },
      input: { method: 'loopback', generatorDbfs: -20, capturedDbfs: -20, capturedHz: 1000.2 },
    });
    const points = ISO_266_THIRD_OCTAVE_HZ.map((f) => ({ frequencyHz: f, generatorDbfs: -12, capturedDbfs: -12 + chainDb(f), gainDb: 0, relativeDb: 0 }));
    await call('recordChainCheck', {
      calibrationId: calibration.id,
      operator: 'A. Tester',
      result: {
        schemaVersion: 1,
        measuredAt: new Date(clock).toISOString(),
        sampleRateHz: 48000,
        inputDbuAtFullScale: null,
        residuals: [{ frequencyHz: 1000, generatorDbfs: -12, thdDb: -105, thdnDb: -95 }],
        noiseFloor: null,
        response: { referenceHz: 1000, referenceGainDb: 0, points },
        responseRefusal: null,
        latency: null,
        latencyRefusal: null,
      },
    });
    const id = await importFile(procedure('A', 6, true));
    const runId = await atResponseStep(id, 'X1-0006');
    const both: AnalogueResponse = (f) => {
      const a = butterworthHighPass2(5)(f);
      const x = f / 4;
      const c = { re: (x * x) / (1 + x * x), im: x / (1 + x * x) }; // jx/(1 + jx)
      return { re: a.re * c.re - a.im * c.im, im: a.re * c.im + a.im * c.re };
    };
    const spec = specOf(6);
    const result = (await call('recordResponse', record(runId, Array.from(filtered(logSweep(spec), RATE, both, 480))))).stepResults.at(-1)!;
    expect(result.curve).toMatchObject({ corrected: true, uncorrectedReason: null });
    expect(result.measurements[0].note).toMatch(/corrected by the station's chain response \(chain check of \d{4}-\d\d-\d\d\)$/);
    const [f20, db20] = result.curve!.response[0];
    const unitDb = 10 * Math.log10((f20 / 5) ** 4 / (1 + (f20 / 5) ** 4));
    // Uncorrected it would read about −0.19 dB at 20 Hz; corrected, the unit's own −0.017 dB.
    expect(Math.abs(db20 - unitDb)).toBeLessThan(0.03);
    expect(Math.abs(chainDb(20) - chainDb(1000))).toBeGreaterThan(0.15);
  }, 120_000);
});
