// Issue 11, `max-level` in main: the page sends the whole sequence (each level's generator setting
// with its reading) and main re-runs the step's rules on every reading in order, computes the
// crossing itself, and stores the measurement with its limit through the same storage as every
// check step, so the unit verdict and the re-judging of stored results work unchanged. A PASS only
// when earned: a sequence out of order, cut short or run on, a reading that is not of its level,
// or a clipped input never passes.
//
// Expected values come from outside the code:
// - levels by the dBu definition, 0 dBu = √0.6 V RMS = 0.7746 V, and a full-scale sine at 0 dBFS
//   (AES17): the station is calibrated with a voltmeter reading 0.7746 V while the generator plays
//   −20 dBFS (so +20 dBu at full scale), and a loopback reading −18 dBFS for −20 dBFS played;
// - the cubic stage y = x − a·x³ by its Fourier series (tests/support/max-level.ts): where its
//   THD+N reaches 1 % in closed form.

import { writeFileSync } from 'node:fs';
import { join } from 'node:path';
import { afterEach, beforeEach, describe, expect, it } from 'vitest';
import { openStation } from '../../electron/services/station.ts';
import type { RunDetail } from '../../shared/ipc/contract.ts';
import type { Reading } from '../../shared/measurement/reading.ts';
import { buildSheetModel } from '../../shared/sheet/sheet-model.ts';
import { accepted, noCaller, refusedWith, TEST_SETUP, tempDir } from '../support/station.ts';
import { cubicCrossingDbu, cubicReading, MAX_LEVEL_STEP, maxLevelProcedureText } from '../support/max-level.ts';

const SETUP = TEST_SETUP;
const OUT_FS = 20 * Math.log10(0.7746 / Math.sqrt(0.6)) + 20;
const IN_FS = -20 + OUT_FS + 18;
const STATION = { outFs: OUT_FS, inFs: IN_FS };
/** a = 0.108: THD reaches 1 % near 0.6 of full scale, about +15.6 dBu out. */
const A = 0.108;

/** The step with a +19 dBu ceiling: this station's output reaches +20 dBu at full scale. */
const MAX_LEVEL = { ...MAX_LEVEL_STEP, id: 'max-level', ceiling: { value: 19, unit: 'dBu' } };

let revisions = 0;
function procedureFile(folder: string, maxLevel: object): string {
  const path = join(folder, `ml-${++revisions}.json`);
  writeFileSync(path, maxLevelProcedureText(maxLevel, `R${revisions}`));
  return path;
}

let dir: ReturnType<typeof tempDir>;
let station: ReturnType<typeof openStation>;

const call = <T = RunDetail>(channel: string, payload: unknown, caller = noCaller) => accepted<T>(station.handlers, channel, payload, caller);
const refusal = (channel: string, payload: unknown) => refusedWith(station.handlers, channel, payload);
const rows = (table: string) => (station.db.prepare(`SELECT COUNT(*) AS n FROM ${table}`).get() as { n: number }).n;

beforeEach(async () => {
  dir = tempDir('trimbench-max-level-');
  station = openStation({ dataDir: dir.path, stationName: 'bench-7', log: { record: () => '' } });
  await call('recordCalibration', {
    operator: 'A. Tester',
    setup: SETUP,
    output: { referenceHz: 1000, referenceDbfs: -20, meterEntry: '0.7746 V' },
    input: { method: 'loopback', generatorDbfs: -20, capturedDbfs: -18, capturedHz: 1000.2 },
  });
});
afterEach(() => {
  station.close();
  dir.remove();
});

/** A unit of a procedure with this max-level step, its safety notice acknowledged. */
async function unitAtMaxLevel(serial: string, maxLevel: object = MAX_LEVEL): Promise<number> {
  const path = procedureFile(dir.path, maxLevel);
  const { id } = await call<{ id: number }>('importProcedure', {}, { ...noCaller, chooseProcedureFile: async () => path });
  const runId = (await call('openRun', { serial, procedureId: id, operator: 'A. Tester', setup: SETUP })).run.id;
  await call('acknowledgeNotice', { runId, stepId: 'safety' });
  return runId;
}

/** The generator levels of the step, dBFS: +4, +5, … dBu through the output calibration. */
const levelDbfs = (k: number) => 4 + k - OUT_FS;
type Point = { stimulus: { on: boolean; frequencyHz: number; levelDbfs: number }; reading: Reading };
/** The sequence up to and including level `last` (0-based), each reading from `readingAt`. */
const sequence = (last: number, readingAt: (dbfs: number, k: number) => Reading = (dbfs) => cubicReading(A, dbfs, STATION)): Point[] =>
  Array.from({ length: last + 1 }, (_, k) => ({ stimulus: { on: true, frequencyHz: 1000, levelDbfs: levelDbfs(k) }, reading: { ...readingAt(levelDbfs(k), k), sequence: k + 1 } }));
/** The level at which the cubic stage's THD+N first reaches 1 %: the closed form's crossing lies below it. */
const crossingIndex = () => Math.ceil(cubicCrossingDbu(A, 1, OUT_FS) - 4 + 1e-9);
const record = (runId: number, points: Point[]) => call('recordMaxLevel', { runId, stepId: 'max-level', points, setup: SETUP });
const refuse = (runId: number, points: Point[]) => refusal('recordMaxLevel', { runId, stepId: 'max-level', points, setup: SETUP });

describe('recordMaxLevel', () => {
  it('stores the crossing main computes, with its limit, as a PASS earned; it reads back and the walk goes on', async () => {
    const runId = await unitAtMaxLevel('ML-0001');
    // The output crosses near +15.6 dBu: the generator's level there (unity gain) is the first past it.
    const points = sequence(crossingIndex());
    const detail = await record(runId, points);
    const result = detail.stepResults.find((r) => r.stepId === 'max-level')!;
    expect(result.verdict).toBe('pass');
    const m = result.measurements[0];
    expect(m).toMatchObject({ quantity: 'maxLevelDbu', unit: 'dBu', low: 12, high: null, verdict: 'pass' });
    expect(Math.abs(m.value! - cubicCrossingDbu(A, 1, OUT_FS))).toBeLessThan(0.05);
    expect(detail.judgement.nextStepId).toBe('trim');
    // Read back (each stored verdict judged again against its stored limit): unchanged.
    const again = station.records.getRun(runId).stepResults.find((r) => r.stepId === 'max-level')!;
    expect(again.measurements[0].value).toBe(m.value);
  });

  it('a FAIL below the limit, and a clipped input a FAIL with its reason, never a PASS', async () => {
    const low = await unitAtMaxLevel('ML-0002', { ...MAX_LEVEL, limits: { maxLevelDbu: { low: 17, unit: 'dBu' } } });
    const failed = (await record(low, sequence(crossingIndex()))).stepResults.at(-1)!;
    expect(failed.verdict).toBe('fail');
    expect(failed.reasons[0]).toMatch(/below the low limit of \+?17\.0 dBu/);

    const clipped = await unitAtMaxLevel('ML-0003');
    // The input clips at the fourth level, long before THD+N reaches 1 %.
    const points = sequence(3, (dbfs, k) => cubicReading(A, dbfs, STATION, 1000, k === 3 ? { flags: ['clipping'] } : {}));
    const stored = (await record(clipped, points)).stepResults.at(-1)!;
    expect(stored.verdict).toBe('fail');
    expect(stored.measurements[0].value).toBeNull();
    expect(stored.reasons[0]).toMatch(/input clipped at the generator's \+7\.0 dBu, before THD\+N reached 1 %/);
  });

  it('a ceiling reached without crossing: a lower bound, a PASS when it meets the limit, and the sheet says it is a bound', async () => {
    const runId = await unitAtMaxLevel('ML-0004');
    const gentle = sequence(15, (dbfs) => cubicReading(0.01, dbfs, STATION));
    const result = (await record(runId, gentle)).stepResults.at(-1)!;
    expect(result.verdict).toBe('pass');
    expect(result.measurements[0].note).toMatch(/^a lower bound/);
    // +19 dBu played, read through the stage's 1 − 3a/4 at full drive and back through both calibrations.
    const x = 10 ** (levelDbfs(15) / 20);
    expect(result.measurements[0].value!).toBeCloseTo(20 * Math.log10(x * (1 - 0.0075 * x * x)) + OUT_FS, 6);
    // The sheet's step row, through the generic rows: the value with its limit, the bound as its footnote.
    const sheet = buildSheetModel(station.records.getRun(runId));
    const row = sheet.steps.find((s) => s.id === 'max-level')!;
    expect(row.conditions).toMatch(/^1 kHz rising from \+4\.0 to at most \+19\.0 dBu in 1 dB steps, until THD\+N reaches 1 %/);
    expect(row.statusText).toBe('PASS');
    expect(row.measurements[0]).toMatchObject({ label: 'Max level', limitText: '≥ +12.0 dBu', noteNumber: 1 });
    expect(row.measurements[0].valueText).toBe(`+${(20 * Math.log10(x * (1 - 0.0075 * x * x)) + OUT_FS).toFixed(1)} dBu`);
    expect(sheet.notes[0]).toMatch(/^a lower bound: the ceiling was reached with THD\+N at 0\.\d+ %, under the 1 % threshold/);
  });

  it('refuses a sequence out of order, a reading not of its level, a sequence cut short or run on, and stores nothing', async () => {
    const runId = await unitAtMaxLevel('ML-0005');
    const before = rows('step_results');
    const full = sequence(crossingIndex());
    // A level skipped: the third reading was taken at the fourth level.
    const skipped = [...full.slice(0, 2), ...full.slice(3)];
    expect(await refuse(runId, skipped)).toMatch(/Reading 3 of the sequence: Level 3 of 16/);
    // Not of the stimulus: the tone found is 10 % off the generator's.
    const foreign = full.map((p, i) => (i === 1 ? { ...p, reading: { ...p.reading, measuredFundamentalHz: 1100 } } : p));
    expect(await refuse(runId, foreign)).toMatch(/Reading 2 of the sequence: The captured tone is at 1100\.0 Hz/);
    // Cut short while THD+N was still under the threshold; run on past the crossing.
    expect(await refuse(runId, full.slice(0, -1))).toMatch(/below the ceiling, with THD\+N still under 1 %/);
    expect(await refuse(runId, sequence(crossingIndex() + 1))).toMatch(/The sequence ended at reading/);
    // A reading that contradicts itself (settled at 40 % progress) was not produced by the meter.
    const forged = full.map((p, i) => (i === 0 ? { ...p, reading: { ...p.reading, settleProgress: 0.4 } } : p));
    expect(await refuse(runId, forged)).toMatch(/not produced by the meter/);
    // The page cannot judge it through the single-reading channel either.
    expect(await refusal('recordCheckStep', { runId, stepId: 'max-level', stimulus: full[0].stimulus, readings: [{ channel: 1, reading: full[0].reading }], setup: SETUP })).toMatch(/judged from its whole sequence/);
    // More readings than the contract carries.
    const tooMany = Array.from({ length: 101 }, () => full[0]);
    expect(await refuse(runId, tooMany)).toMatch(/100/);
    expect(rows('step_results')).toBe(before);
  });

  it('refuses the channel for a step of another kind', async () => {
    const runId = await unitAtMaxLevel('ML-0006');
    await record(runId, sequence(crossingIndex()));
    expect(await refusal('recordMaxLevel', { runId, stepId: 'trim', points: sequence(0), setup: SETUP })).toMatch(/“trim” is a trim step, not a check step|not a max-level step/);
  });
});
