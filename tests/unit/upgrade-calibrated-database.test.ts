// Issue 10: "old databases upgrade with their data intact (test it on a database made by the
// current release)", for the releases that calibrate the station. Two fixtures, each written once by
// its own release with the script beside it (make.ts.txt, the same script for both):
// - tests/fixtures/station-schema6: commit ef9ca93, schema 6 (calibrations and chain checks; a
//   second run of a unit is not linked to the first);
// - tests/fixtures/station-schema7: commit f60531f, schema 7 (the last before step results; a
//   retest names the run it repeats and why).
//
// Expected values are the script's inputs, written out here:
// - station "bench-2", data folder /tmp/trimbench-bench-2, calibrations valid 30 days; audio setup
//   SETUP below; every time is the script's clock, set before the call that stores it.
// - calibration 1, 2026-12-01 08:00 Z by B. Keeper: the meter read −2 dBu while −20 dBFS played, so
//   the output is −2 − (−20) = +18 dBu at 0 dBFS; −20 dBFS looped back read −22 dBFS, so the input is
//   −20 + 18 − (−22) = +20 dBu at 0 dBFS (levels add in dB; a full-scale sine is 0 dBFS, AES17).
//   Valid until 30 days later, 2026-12-31 08:00 Z.
// - chain check 1 of it, 08:20 Z by B. Keeper: residual THD −95 dB (THD+N −92) at 20 Hz and −105 dB
//   (−98) at 1 kHz; noise −110 dBFS unweighted, −112 dBFS A-weighted over 20 Hz–20 kHz, so −90 and
//   −92 dBu through the +20 dBu input; response steps of −12 dBFS read −12.25, −12 and −12.125 dBFS
//   at 20 Hz, 1 kHz and 20 kHz, so gains −0.25, 0 and −0.125 dB (captured − played), referred to the
//   1 kHz step; latency 480 samples (10 ms at 48 kHz). Every figure is inside that release's default
//   chain limits (THD+N at 1 kHz ≤ −90 dB, THD ≤ −90 dB, ≤ −85 dB below 100 Hz, noise ≤ −97 dBFS
//   unweighted and ≤ −100 dBFS A-weighted, flat within ±0.5 dB, a latency found), so it passed.
// - the demo procedure MG20-LF-TRIM revision B (schema 1, THD limit −60 dB, 14 Hz at −12 dBFS);
//   each reading is the test helper's: one harmonic, H3, at the THD given, so the THD recomputed
//   from the harmonics is that figure (the RSS of one term is itself).
// - run 1, MG20-2612-0701, A. Tester, from 09:00: points at 0, 1.5, 3 and 4 turns with THD −40,
//   −47.5, −55 and −60 dB at 09:01, 09:03, 09:05 and 09:07; the third recorded unsettled and
//   confirmed at 09:08 (after point 4); the live watch raised "gain-rise" at 3.5 turns at 09:06 and
//   cleared it at 09:06:30 (both after point 3); a warm re-check at 09:09, 24.5 → 38 °C, the warm
//   reading's H3 at −59 dBc against the last point's −60; finished as FAIL at 09:10 (final THD −60);
//   sheet saved at 09:11 as /tmp/trimbench-bench-2/sheets/MG20-2612-0701_run-1.pdf.
// - run 2, MG20-2612-0702, D. Operator, from 10:00: points at 0 and 2 turns, THD −42 and −52 dB at
//   10:01 and 10:03; left open.
// - run 3, MG20-2612-0701 again, A. Tester, from 11:00 (schema 7: retest of run 1, "Trimmer replaced
//   after the first trim failed"): points at 0 and 2.5 turns, THD −41 and −58 dB at 11:01 and 11:03;
//   finished as FAIL at 11:05 (final THD −58).
// What the old release computed itself (assessments, the FAIL reasons) is not restated: every stored
// row is compared column by column with the fixture's own, before and after the upgrade.

import { copyFileSync, readdirSync } from 'node:fs';
import { join } from 'node:path';
import { fileURLToPath } from 'node:url';
import Database from 'better-sqlite3';
import { afterEach, beforeEach, describe, expect, it } from 'vitest';
import { MIGRATIONS } from '../../electron/services/database.ts';
import { openStation } from '../../electron/services/station.ts';
import { buildSheetModel } from '../../shared/sheet/sheet-model.ts';
import { accepted, readingWithThd, STEADY_LIVE, tempDir } from '../support/station.ts';

const SETUP = {
  inputDeviceId: 'in-0001',
  inputDeviceLabel: 'Bench interface (invented) input',
  inputChannel: 0,
  outputDeviceId: 'out-0001',
  outputDeviceLabel: 'Bench interface (invented) output',
  sampleRateHz: 48000,
};
const STIMULUS = { on: true, frequencyHz: 14, levelDbfs: -12 };
const CALIBRATED_AT = '2026-12-01T08:00:00.000Z';
const CHECKED_AT = '2026-12-01T08:20:00.000Z';
const EXPIRES_AT = '2026-12-31T08:00:00.000Z';
const RETEST_REASON = 'Trimmer replaced after the first trim failed';

const FIXTURES = [
  { schema: 6, commit: 'ef9ca93', retestLinked: false },
  { schema: 7, commit: 'f60531f', retestLinked: true },
] as const;

/** Every row of every table in a database file, column by column, by table. */
function rowsOf(file: string): Map<string, Record<string, unknown>[]> {
  const db = new Database(file, { readonly: true });
  try {
    const tables = db.prepare<[], { name: string }>("SELECT name FROM sqlite_master WHERE type = 'table' ORDER BY name").all();
    return new Map(tables.map(({ name }) => [name, db.prepare(`SELECT * FROM "${name}" ORDER BY id`).all() as Record<string, unknown>[]]));
  } finally {
    db.close();
  }
}

describe.each(FIXTURES)('a database written by the schema-$schema release ($commit)', ({ schema, retestLinked }) => {
  const fixture = fileURLToPath(new URL(`../fixtures/station-schema${schema}/trimbench.sqlite`, import.meta.url));
  let dir: ReturnType<typeof tempDir>;
  let clock: number;
  let station: ReturnType<typeof openStation>;
  /** The fixture's rows as the old release left them (read from a second copy, never from the one upgraded). */
  let before: Map<string, Record<string, unknown>[]>;

  beforeEach(() => {
    dir = tempDir('trimbench-upgrade-');
    copyFileSync(fixture, join(dir.path, 'trimbench.sqlite'));
    copyFileSync(fixture, join(dir.path, 'as-found.sqlite'));
    before = rowsOf(join(dir.path, 'as-found.sqlite'));
    // A day after the fixture's morning: its calibration (valid until 2026-12-31) still holds.
    clock = Date.parse('2026-12-02T09:00:00Z');
    station = openStation({ dataDir: dir.path, stationName: 'bench-new', now: () => new Date(clock), log: { record: () => '' } });
  });
  afterEach(() => {
    station.close();
    dir.remove();
  });

  it(`upgrades schema ${schema} to today's with every stored row unchanged, SQLite's check clean and a copy kept from before`, () => {
    const old = new Database(join(dir.path, 'as-found.sqlite'), { readonly: true });
    expect(old.pragma('user_version', { simple: true })).toBe(schema);
    old.close();
    expect(station.recordsProblem()).toBeNull();
    expect(station.db.pragma('user_version', { simple: true })).toBe(MIGRATIONS.length);
    expect(station.db.pragma('integrity_check', { simple: true })).toBe('ok');
    expect(readdirSync(dir.path).some((name) => name.startsWith(`trimbench.sqlite.before-schema-${schema + 1}-`))).toBe(true);

    // Every row of every table the old release had, each column it had, exactly as it wrote them.
    // Opening adds today's built-in procedure revisions after the stored ones; nothing else is new.
    const tables = [...before.keys()];
    expect(tables).toEqual(expect.arrayContaining(['calibrations', 'chain_checks', 'point_confirmations', 'runs', 'trim_points', 'warm_checks', 'warning_changes']));
    for (const table of tables) {
      const rows = before.get(table)!;
      const columns = rows.length > 0 ? Object.keys(rows[0]) : [];
      const now = station.db.prepare(`SELECT * FROM "${table}" ORDER BY id`).all() as Record<string, unknown>[];
      const kept = now.slice(0, rows.length).map((row) => Object.fromEntries(columns.map((c) => [c, row[c]])));
      expect(kept, table).toEqual(rows);
      if (table !== 'procedures') expect(now, table).toHaveLength(rows.length);
    }
    // The fixture holds what the script made: three runs on two units, a calibration and its check.
    expect(before.get('runs')).toHaveLength(3);
    expect(before.get('units')!.map((u) => [u.serial, u.created_at])).toEqual([
      ['MG20-2612-0701', '2026-12-01T09:00:00.000Z'],
      ['MG20-2612-0702', '2026-12-01T10:00:00.000Z'],
    ]);
    // Through migration 8: no old run names a station row or a lot, and none has a step result.
    expect(station.db.prepare('SELECT lot, station_id FROM runs ORDER BY id').all()).toEqual(Array(3).fill({ lot: null, station_id: null }));
    expect(station.db.prepare('SELECT (SELECT COUNT(*) FROM step_results) + (SELECT COUNT(*) FROM measurements) AS n').get()).toEqual({ n: 0 });
  });

  it('keeps the calibration and chain check as recorded, and each old run still names them', async () => {
    const list = await accepted<{ calibration: Record<string, unknown>; chainChecks: Record<string, any>[] }[]>(station.handlers, 'listCalibrations', {});
    expect(list).toHaveLength(1);
    expect(list[0].calibration).toEqual({
      id: 1,
      madeAt: CALIBRATED_AT,
      operator: 'B. Keeper',
      station: 'bench-2',
      setup: SETUP,
      output: { dbuAtFullScale: 18, referenceHz: 1000, referenceDbfs: -20, meterEntry: '-2 dBu' },
      input: { method: 'loopback', dbuAtFullScale: 20, generatorDbfs: -20, capturedDbfs: -22, capturedHz: 1000 },
      // Those releases read one input: no second input was calibrated.
      secondInput: null,
    });
    expect(list[0].chainChecks).toHaveLength(1);
    const [check] = list[0].chainChecks;
    expect({ id: check.id, calibrationId: check.calibrationId, operator: check.operator, pass: check.judgement.pass }).toEqual({
      id: 1,
      calibrationId: 1,
      operator: 'B. Keeper',
      pass: true,
    });
    expect(check.result).toEqual({
      schemaVersion: 1,
      measuredAt: CHECKED_AT,
      sampleRateHz: 48000,
      inputDbuAtFullScale: 20,
      residuals: [
        { frequencyHz: 20, generatorDbfs: -1, thdDb: -95, thdnDb: -92 },
        { frequencyHz: 1000, generatorDbfs: -1, thdDb: -105, thdnDb: -98 },
      ],
      noiseFloor: { bandLowHz: 20, bandHighHz: 20000, unweightedDbfs: -110, aWeightedDbfs: -112, unweightedDbu: -90, aWeightedDbu: -92 },
      response: {
        referenceHz: 1000,
        referenceGainDb: 0,
        points: [
          { frequencyHz: 20, generatorDbfs: -12, capturedDbfs: -12.25, gainDb: -0.25, relativeDb: -0.25 },
          { frequencyHz: 1000, generatorDbfs: -12, capturedDbfs: -12, gainDb: 0, relativeDb: 0 },
          { frequencyHz: 20000, generatorDbfs: -12, capturedDbfs: -12.125, gainDb: -0.125, relativeDb: -0.125 },
        ],
      },
      responseRefusal: null,
      latency: { latencySamples: 480, latencyMs: 10, confidence: 40, inverted: false },
      latencyRefusal: null,
    });

    expect(station.db.prepare('SELECT calibration_id AS c, chain_check_id AS k, calibration_expires_at AS e FROM runs ORDER BY id').all()).toEqual(
      Array(3).fill({ c: 1, k: 1, e: EXPIRES_AT }),
    );
    for (const runId of [1, 2, 3]) {
      // The chain's floor a run names is the residual nearest its 14 Hz (20 Hz, not 1 kHz) and the A-weighted noise in dBu.
      expect(station.records.getRun(runId).calibration).toEqual({
        id: 1,
        madeAt: CALIBRATED_AT,
        operator: 'B. Keeper',
        expiresAt: EXPIRES_AT,
        inputDbuAtFullScale: 20,
        outputDbuAtFullScale: 18,
        secondInput: null,
        chainFloor: { residualThdDb: -95, residualAtHz: 20, noiseAWeightedDbu: -92, checkedAt: CHECKED_AT, pass: true },
      });
    }
    // Still the station's calibration for the setup it was made with, a day later.
    const current = await accepted<{ calibration: { id: number } | null; chainCheck: { id: number } | null }>(station.handlers, 'getStationCalibration', {});
    expect([current.calibration?.id, current.chainCheck?.id]).toEqual([1, 1]);
  });

  it('reads every run, point, confirmation, warning and verdict as the technician recorded them', () => {
    const first = station.records.getRun(1);
    expect(first.run).toMatchObject({
      serial: 'MG20-2612-0701',
      procedureCode: 'MG20-LF-TRIM',
      procedureRevision: 'B',
      operator: 'A. Tester',
      station: 'bench-2',
      startedAt: '2026-12-01T09:00:00.000Z',
      finishedAt: '2026-12-01T09:10:00.000Z',
      verdict: 'fail',
      finalThdDb: -60,
      limitThdDb: -60,
      sheetPdfPath: '/tmp/trimbench-bench-2/sheets/MG20-2612-0701_run-1.pdf',
      retestOf: null,
      retestReason: null,
      lot: null,
      walked: false,
    });
    expect(first.run.verdictReasons.length).toBeGreaterThan(0);
    expect(first.trimPoints.map((p) => [p.sequence, p.position, p.reading.thdDb, p.recordedAt, p.settled, p.inFit, p.confirmedAt, p.stimulusHz])).toEqual([
      [1, 0, -40, '2026-12-01T09:01:00.000Z', true, true, null, 14],
      [2, 1.5, -47.5, '2026-12-01T09:03:00.000Z', true, true, null, 14],
      [3, 3, -55, '2026-12-01T09:05:00.000Z', false, true, '2026-12-01T09:08:00.000Z', 14],
      [4, 4, -60, '2026-12-01T09:07:00.000Z', true, true, null, 14],
    ]);
    expect(first.trimPoints.map((p) => p.reading.harmonics.map((h) => [h.order, h.levelDbc]))).toEqual([[[3, -40]], [[3, -47.5]], [[3, -55]], [[3, -60]]]);
    expect(station.db.prepare('SELECT point_id, after_sequence, confirmed_at FROM point_confirmations').all()).toEqual([
      { point_id: 3, after_sequence: 4, confirmed_at: '2026-12-01T09:08:00.000Z' },
    ]);
    expect(first.warningLog.filter((w) => w.source === 'live')).toEqual([
      { id: 'gain-rise', change: 'raised', at: '2026-12-01T09:06:00.000Z', position: 3.5, afterSequence: 3, seen: 'gain up 1.2 dB from the safe end', source: 'live' },
      { id: 'gain-rise', change: 'cleared', at: '2026-12-01T09:06:30.000Z', position: 3.5, afterSequence: 3, seen: 'gain back within 0.8 dB of the safe end', source: 'live' },
    ]);
    expect(first.warmCheck).toMatchObject({ recordedAt: '2026-12-01T09:09:00.000Z', position: 4, coldTemperatureC: 24.5, warmTemperatureC: 38, coldLevelDbc: -60, warmLevelDbc: -59 });
    // The old run's assessment is still there, the one made after its last point and confirmation.
    expect(first.assessment).not.toBeNull();

    const open = station.records.getRun(2);
    expect(open.run).toMatchObject({ serial: 'MG20-2612-0702', operator: 'D. Operator', startedAt: '2026-12-01T10:00:00.000Z', finishedAt: null, verdict: null, sheetPdfPath: null });
    expect(open.trimPoints.map((p) => [p.position, p.reading.thdDb, p.recordedAt])).toEqual([
      [0, -42, '2026-12-01T10:01:00.000Z'],
      [2, -52, '2026-12-01T10:03:00.000Z'],
    ]);

    const retest = station.records.getRun(3);
    expect(retest.run).toMatchObject({
      serial: 'MG20-2612-0701',
      operator: 'A. Tester',
      startedAt: '2026-12-01T11:00:00.000Z',
      finishedAt: '2026-12-01T11:05:00.000Z',
      verdict: 'fail',
      finalThdDb: -58,
      sheetPdfPath: null,
      // Schema 6 kept no link: its second run of a unit reads as a retest of nothing named.
      retestOf: retestLinked ? 1 : null,
      retestReason: retestLinked ? RETEST_REASON : null,
    });
    expect(retest.earlierRuns).toBe(1);
    expect(retest.trimPoints.map((p) => [p.position, p.reading.thdDb, p.recordedAt])).toEqual([
      [0, -41, '2026-12-01T11:01:00.000Z'],
      [2.5, -58, '2026-12-01T11:03:00.000Z'],
    ]);

    const history = station.records.lookUpUnit('MG20-2612-0701')!;
    expect(history.runs.map((r) => [r.run?.id, r.finalPosition, r.points, r.unreadable])).toEqual([
      [1, 4, 4, null],
      [3, 2.5, 2, null],
    ]);
  });

  it('keeps the finished runs frozen', () => {
    expect(() => station.db.prepare("UPDATE runs SET verdict = 'pass' WHERE id = 1").run()).toThrow(/a finished run is never edited/);
    expect(() => station.db.prepare('UPDATE runs SET retest_reason = ? WHERE id = 3').run('edited')).toThrow(/a finished run is never edited/);
    expect(() => station.db.prepare('UPDATE trim_points SET position = 5 WHERE id = 1').run()).toThrow(/never edited/);
    expect(() => station.db.prepare('DELETE FROM warning_changes WHERE run_id = 1').run()).toThrow(/never deleted/);
    expect(() => station.db.prepare('UPDATE calibrations SET output_dbu_at_fs = 0 WHERE id = 1').run()).toThrow(/never edited/);
    expect(() =>
      station.records.recordTrimPoint({ runId: 1, position: 5, reading: readingWithThd(-61), live: STEADY_LIVE, stimulus: STIMULUS }),
    ).toThrow(/Run 1 is finished/);
    // Finishing it again changes nothing: the stored verdict and time come back.
    const again = station.records.finishRun({ runId: 1 });
    expect([again.run.verdict, again.run.finishedAt]).toEqual(['fail', '2026-12-01T09:10:00.000Z']);
  });

  it('lets the open run go on under its operator: the notice first, then a point, then Finish', () => {
    const procedureId = station.records.listProcedures().find((p) => p.definition.code === 'MG20-LF-TRIM')!.id;
    const open = station.records.openRun({ serial: 'MG20-2612-0702', procedureId, operator: 'D. Operator', setup: SETUP });
    expect(open.run.id).toBe(2);
    expect(open.trimPoints).toHaveLength(2);
    // The walk starts with the schema-1 procedure's safety notice, even for a run begun before it existed.
    expect(open.judgement.nextStepId).toBe('safety');
    expect(() => station.records.recordTrimPoint({ runId: 2, position: 3, reading: readingWithThd(-57), live: STEADY_LIVE, stimulus: STIMULUS })).toThrow(
      /step “safety” has no result yet/,
    );
    clock = Date.parse('2026-12-02T09:01:00Z');
    station.records.acknowledgeNotice({ runId: 2, stepId: 'safety' });
    clock = Date.parse('2026-12-02T09:02:00Z');
    station.records.recordTrimPoint({ runId: 2, position: 3, reading: readingWithThd(-57), live: STEADY_LIVE, stimulus: STIMULUS, setup: SETUP });
    clock = Date.parse('2026-12-02T09:03:00Z');
    const finished = station.records.finishRun({ runId: 2, asFailure: true });
    expect(finished.run).toMatchObject({ verdict: 'fail', finishedAt: '2026-12-02T09:03:00.000Z', finalThdDb: -57, operator: 'D. Operator' });
    expect(finished.trimPoints.map((p) => [p.position, p.recordedAt])).toEqual([
      [0, '2026-12-01T10:01:00.000Z'],
      [2, '2026-12-01T10:03:00.000Z'],
      [3, '2026-12-02T09:02:00.000Z'],
    ]);
    expect(finished.calibration?.id).toBe(1);
    expect(() => station.records.recordTrimPoint({ runId: 2, position: 4, reading: readingWithThd(-58), live: STEADY_LIVE, stimulus: STIMULUS })).toThrow(/Run 2 is finished/);

    // The unit tested before gets a retest only with a reason, linked to its latest run (3).
    expect(() => station.records.openRun({ serial: 'MG20-2612-0701', procedureId, operator: 'A. Tester', setup: SETUP })).toThrow(/Give the reason for the retest/);
    const retest = station.records.openRun({ serial: 'MG20-2612-0701', procedureId, operator: 'A. Tester', setup: SETUP, retestReason: 'Second opinion' });
    expect([retest.run.retestOf, retest.run.retestReason, retest.earlierRuns, retest.calibration?.id]).toEqual([3, 'Second opinion', 2, 1]);
  });

  it('gives an old run’s unit sheet as a run from before step results, with its calibration, points and warnings', () => {
    const sheet = buildSheetModel(station.records.getRun(1));
    expect(sheet).toMatchObject({
      runId: 1,
      station: 'bench-2',
      operator: 'A. Tester',
      startedAt: '2026-12-01T09:00:00.000Z',
      finishedAt: '2026-12-01T09:10:00.000Z',
      unit: { serial: 'MG20-2612-0701', modelCode: 'MG-20', lot: null },
      procedure: { code: 'MG20-LF-TRIM', revision: 'B', invented: true },
      retest: { ofRunId: null, reason: null, earlierRuns: 0 },
      verdict: { verdict: 'fail', text: 'FAIL', discrepancy: null },
      calibration: { used: true, id: 1, operator: 'B. Keeper', madeAt: CALIBRATED_AT, expiresAt: EXPIRES_AT, chainFloor: { checkedAt: CHECKED_AT, passText: 'PASS' } },
    });
    expect(sheet.verdict.reasons).toEqual(station.records.getRun(1).run.verdictReasons);
    expect(sheet.stepsNote).not.toBeNull();
    expect(sheet.steps.map((s) => [s.id, s.kind, s.status])).toEqual([
      ['safety', 'notice', 'not-recorded'],
      ['trim', 'trim', 'not-recorded'],
    ]);
    expect(sheet.trim!.points.map((p) => [p.sequence, p.recordedAt, p.outOfFit])).toEqual([
      [1, '2026-12-01T09:01:00.000Z', false],
      [2, '2026-12-01T09:03:00.000Z', false],
      [3, '2026-12-01T09:05:00.000Z', false],
      [4, '2026-12-01T09:07:00.000Z', false],
    ]);
    // Only the third point was unsettled, and it was confirmed.
    expect(sheet.trim!.points.map((p) => p.settled)).toEqual(['yes', 'yes', 'no, confirmed *', 'yes']);
    expect(sheet.trim!.warnings.map((w) => [w.at, w.change, w.afterSequence])).toEqual([
      ['2026-12-01T09:06:00.000Z', 'raised', 3],
      ['2026-12-01T09:06:30.000Z', 'cleared', 3],
    ]);
    expect(sheet.trim!.warmCheck).not.toBe('not done');

    const retestSheet = buildSheetModel(station.records.getRun(3));
    expect(retestSheet.retest).toMatchObject({ ofRunId: retestLinked ? 1 : null, reason: retestLinked ? RETEST_REASON : null, earlierRuns: 1 });
    expect(retestSheet.retest.text).toContain(retestLinked ? `retest of run 1; 1 earlier run: ${RETEST_REASON}` : 'retest; 1 earlier run');
  });
});
