import { afterEach, beforeEach, describe, expect, it } from 'vitest';
import Database from 'better-sqlite3';
import { existsSync, mkdirSync, readdirSync, readFileSync, writeFileSync } from 'node:fs';
import { join } from 'node:path';
import { MIGRATIONS, openDatabase } from '../../electron/services/database.ts';
import { DATABASE_FILE } from '../../electron/services/station.ts';
import { sheetFileName } from '../../electron/services/sheets.ts';
import { DEMO_PROCEDURE } from '../../shared/procedures/demo-procedure.ts';
import { noCaller, openTestStation, readingWithThd, tempDir, startUnit } from '../support/station.ts';

/** The generator at the demo procedure's stimulus, as the page reports it. */
const STIMULUS = { on: true, frequencyHz: DEMO_PROCEDURE.trim.stimulusHz, levelDbfs: DEMO_PROCEDURE.trim.stimulusLevelDbfs };

let dir: ReturnType<typeof tempDir>;
beforeEach(() => {
  dir = tempDir();
});
afterEach(() => dir.remove());

describe('records on a real database file', () => {
  it('creates and migrates the database in WAL mode with the demo procedure stored', () => {
    const station = openTestStation(dir.path);
    expect(station.db.pragma('journal_mode', { simple: true })).toBe('wal');
    expect(station.db.pragma('user_version', { simple: true })).toBe(MIGRATIONS.length);
    const procedures = station.records.listProcedures();
    expect(procedures).toHaveLength(1);
    expect(procedures[0].definition.invented).toBe(true);
    station.close();
  });

  it('keeps trim points across a reopen of the database and of the serial', () => {
    let station = openTestStation(dir.path);
    const procedureId = station.records.listProcedures()[0].id;
    const opened = startUnit(station.records, { serial: 'MG20-2611-0042', procedureId, operator: 'A. Tester' });
    station.records.recordTrimPoint({ runId: opened.run.id, position: 0, reading: readingWithThd(-38), live: null, stimulus: STIMULUS });
    station.records.recordTrimPoint({ runId: opened.run.id, position: 2.5, reading: readingWithThd(-47), live: null, stimulus: STIMULUS });
    station.close();

    station = openTestStation(dir.path);
    const reopened = startUnit(station.records, { serial: 'mg20-2611-0042', procedureId, operator: 'A. Tester' });
    expect(reopened.run.id).toBe(opened.run.id);
    expect(reopened.run.operator).toBe('A. Tester');
    expect(reopened.trimPoints.map((p) => [p.sequence, p.position, p.reading.thdDb])).toEqual([
      [1, 0, -38],
      [2, 2.5, -47],
    ]);
    station.close();
  });

  it('finishes a run as FAIL on request, freezes it, and starts a retest as a new run', () => {
    const station = openTestStation(dir.path);
    const procedureId = station.records.listProcedures()[0].id;
    const { run } = startUnit(station.records, { serial: 'MG20-2611-0043', procedureId, operator: 'A. Tester' });
    expect(() => station.records.finishRun({ runId: run.id })).toThrow(/No trim point has been recorded/);
    station.records.recordTrimPoint({ runId: run.id, position: 0, reading: readingWithThd(-40), live: null, stimulus: STIMULUS });
    station.records.recordTrimPoint({ runId: run.id, position: 4, reading: readingWithThd(-66), live: null, stimulus: STIMULUS });
    const finished = station.records.finishRun({ runId: run.id, asFailure: true });
    expect(finished.run.verdict).toBe('fail');
    expect(finished.run.verdictReasons.length).toBeGreaterThan(0);
    expect(finished.run.finalThdDb).toBe(-66);
    expect(() => station.records.recordTrimPoint({ runId: run.id, position: 5, reading: readingWithThd(-70), live: null, stimulus: STIMULUS })).toThrow(/finished/);
    // The database itself refuses edits to a finished run, whatever the code does.
    expect(() => station.db.prepare("UPDATE runs SET verdict = 'fail' WHERE id = ?").run(run.id)).toThrow(/never edited/);
    expect(() => station.db.prepare('DELETE FROM trim_points').run()).toThrow(/never deleted/);

    // A retest needs its reason (issue 10: "start a retest with a reason, linked to the run it repeats").
    expect(() => startUnit(station.records, { serial: 'MG20-2611-0043', procedureId, operator: 'A. Tester' })).toThrow(
      new RegExp(`was tested before: run ${run.id}, FAIL.*Give the reason for the retest`),
    );
    const retest = startUnit(station.records, { serial: 'MG20-2611-0043', procedureId, operator: 'A. Tester', retestReason: 'Trimmer replaced' });
    expect(retest.run.id).not.toBe(run.id);
    expect(retest.run.retestOf).toBe(run.id);
    expect(retest.run.retestReason).toBe('Trimmer replaced');
    expect(retest.earlierRuns).toBe(1);
    expect(retest.trimPoints).toEqual([]);
    // Looking the serial up creates nothing and lists both runs, oldest first.
    const runsBefore = (station.db.prepare('SELECT COUNT(*) AS n FROM runs').get() as { n: number }).n;
    const history = station.records.lookUpUnit('MG20-2611-0043')!;
    expect(history.runs.map((r) => r.run?.id)).toEqual([run.id, retest.run.id]);
    expect(history.runs[0].run?.verdict).toBe('fail');
    expect(history.runs[1].run?.retestOf).toBe(run.id);
    expect(station.records.lookUpUnit('MG20-2611-9999')).toBeNull();
    expect((station.db.prepare('SELECT COUNT(*) AS n FROM runs').get() as { n: number }).n).toBe(runsBefore);
    station.close();
  });

  it('fails a run whose last point is above the limit', () => {
    const station = openTestStation(dir.path);
    const procedureId = station.records.listProcedures()[0].id;
    const { run } = startUnit(station.records, { serial: 'MG20-2611-0044', procedureId, operator: 'A. Tester' });
    station.records.recordTrimPoint({ runId: run.id, position: 3, reading: readingWithThd(-55), live: null, stimulus: STIMULUS });
    expect(() => station.records.finishRun({ runId: run.id })).toThrow(/above the limit of -60 dB/);
    const finished = station.records.finishRun({ runId: run.id, asFailure: true });
    expect(finished.run.verdict).toBe('fail');
    expect(finished.run.verdictReasons.join(' ')).toContain('THD -55.0 dB at the final point is above the limit of -60 dB.');
    station.close();
  });

  it('refuses readings that are not measurements of the unit', () => {
    const station = openTestStation(dir.path);
    const procedureId = station.records.listProcedures()[0].id;
    const { run } = startUnit(station.records, { serial: 'MG20-2611-0045', procedureId, operator: 'A. Tester' });
    expect(() =>
      station.records.recordTrimPoint({ runId: run.id, position: 1, reading: readingWithThd(-300, { flags: ['no-signal'] }), live: null, stimulus: STIMULUS }),
    ).toThrow(/No signal/);
    expect(() =>
      station.records.recordTrimPoint({ runId: run.id, position: 1, reading: readingWithThd(-20, { flags: ['clipping'] }), live: null, stimulus: STIMULUS }),
    ).toThrow(/clipping/);
    expect(() => station.records.recordTrimPoint({ runId: run.id, position: 11, reading: readingWithThd(-40), live: null, stimulus: STIMULUS })).toThrow(
      /outside 0–10 turns/,
    );
    expect(station.records.getRun(run.id).trimPoints).toEqual([]);
    station.close();
  });

  it('writes the sheet PDF once, beside the database, and records its path', async () => {
    const station = openTestStation(dir.path);
    const procedureId = station.records.listProcedures()[0].id;
    const { run } = startUnit(station.records, { serial: 'MG20-2611-0046', procedureId, operator: 'A. Tester' });
    station.records.recordTrimPoint({ runId: run.id, position: 3, reading: readingWithThd(-62), live: null, stimulus: STIMULUS });
    await expect(station.sheets.savePdf(run.id, noCaller.printToPdf)).rejects.toThrow(/Finish the run/);
    station.records.finishRun({ runId: run.id, asFailure: true });
    const saved = await station.sheets.savePdf(run.id, noCaller.printToPdf);
    expect(saved.alreadySaved).toBe(false);
    expect(saved.path.startsWith(join(dir.path, 'sheets'))).toBe(true);
    expect(readFileSync(saved.path, 'latin1').startsWith('%PDF')).toBe(true);
    expect((await station.sheets.savePdf(run.id, noCaller.printToPdf)).alreadySaved).toBe(true);
    expect(station.records.getRun(run.id).run.sheetPdfPath).toBe(saved.path);
    station.close();
  });

  it('stores the assistant\'s assessment after every point, and the warnings raised, with the run', () => {
    const station = openTestStation(dir.path);
    const procedureId = station.records.listProcedures()[0].id;
    const { run } = startUnit(station.records, { serial: 'MG20-2611-0050', procedureId, operator: 'A. Tester' });
    // H3 along one phase: 0.01 at 0 turns, 0.005 at 2.5 turns, so the straight line crosses zero at 5.
    const at = (position: number, levelDbc: number, phaseDeg: number, lfDbfs = -120) =>
      station.records.recordTrimPoint({
        runId: run.id,
        position,
        reading: readingWithThd(levelDbc, { harmonics: [{ order: 3, frequencyHz: 42, levelDbc, phaseDeg }], subAudioDbfs: lfDbfs }),
        live: null,
        stimulus: STIMULUS,
      });
    const first = at(0, -40, 30);
    expect(first.assessment.model).toBeNull();
    const second = at(2.5, 20 * Math.log10(0.005), 30);
    expect(second.assessment.model).toBe('phasor');
    expect(second.assessment.nullPosition).toBeCloseTo(5, 6);
    // Past the null the phase has turned by 180°; the sub-audio level has risen 25 dB (the demo warns at 20).
    at(5.25, 20 * Math.log10(0.0005), -150, -95);
    const detail = station.records.getRun(run.id);
    expect(detail.assessment!.side).toBe('past-null');
    expect(detail.warningsRaised.map((w) => [w.id, w.afterSequence])).toEqual([
      ['lf-instability', 3],
      ['past-null', 3],
    ]);
    const count = station.db.prepare('SELECT COUNT(*) AS n FROM trim_assessments WHERE run_id = ?').get(run.id) as { n: number };
    expect(count.n).toBe(3);
    // The log holds each warning as raised after point 3, at its position, with what was seen.
    expect(detail.warningLog.map((w) => [w.id, w.change, w.afterSequence, w.position, w.source])).toEqual([
      ['lf-instability', 'raised', 3, 5.25, 'assessment'],
      ['past-null', 'raised', 3, 5.25, 'assessment'],
    ]);
    for (const entry of detail.warningLog) expect(entry.at).toMatch(/^\d{4}-\d\d-\d\dT\d\d:\d\d:\d\d(\.\d+)?(Z|[+-]\d\d:\d\d)$/);
    // Back on the short side (the line's phase again, sub-audio back to the safe end's): both clear,
    // logged at the point where they cleared.
    at(4.5, 20 * Math.log10(0.001), 30);
    expect(station.records.getRun(run.id).warningLog.slice(2).map((w) => [w.id, w.change, w.afterSequence, w.position])).toEqual([
      ['lf-instability', 'cleared', 4, 4.5],
      ['past-null', 'cleared', 4, 4.5],
    ]);
    station.close();
  });

  it('refuses to finish a run left past the null, and finishes it as FAIL with that reason on request', () => {
    const station = openTestStation(dir.path);
    const procedureId = station.records.listProcedures()[0].id;
    const { run } = startUnit(station.records, { serial: 'MG20-2611-0054', procedureId, operator: 'A. Tester' });
    // The same line as above: null at 5 turns by construction; the final point 0.25 turns past it.
    const at = (position: number, levelDbc: number, phaseDeg: number) =>
      station.records.recordTrimPoint({
        runId: run.id,
        position,
        reading: readingWithThd(levelDbc, { harmonics: [{ order: 3, frequencyHz: 42, levelDbc, phaseDeg }] }),
        live: null,
        stimulus: STIMULUS,
      });
    at(0, -40, 30);
    at(2.5, 20 * Math.log10(0.005), 30);
    at(5.25, 20 * Math.log10(0.0005), -150);
    expect(() => station.records.finishRun({ runId: run.id })).toThrow(/past the null/);
    expect(station.records.getRun(run.id).run.finishedAt).toBeNull();
    const finished = station.records.finishRun({ runId: run.id, asFailure: true });
    expect(finished.run.verdict).toBe('fail');
    expect(finished.run.verdictReasons.join(' ')).toContain('The trimmer was left past the null (over-compensated).');
    station.close();
  });

  it('records a warm re-check against the last trim point', () => {
    const station = openTestStation(dir.path);
    const procedureId = station.records.listProcedures()[0].id;
    const { run } = startUnit(station.records, { serial: 'MG20-2611-0051', procedureId, operator: 'A. Tester' });
    const reading = (levelDbc: number) => readingWithThd(levelDbc, { harmonics: [{ order: 3, frequencyHz: 42, levelDbc, phaseDeg: 10 }] });
    station.records.recordTrimPoint({ runId: run.id, position: 0, reading: reading(-40), live: null, stimulus: STIMULUS });
    station.records.recordTrimPoint({ runId: run.id, position: 4.8, reading: reading(-70), live: null, stimulus: STIMULUS });
    // Copper α = 0.00393/°C (IEC 60028): 20 °C untracked moves H3 by α·20·0.01 = 7.9e-4.
    const check = station.records.recordWarmCheck({ runId: run.id, coldTemperatureC: 22, warmTemperatureC: 42, reading: reading(-70), stimulus: STIMULUS });
    expect(check.untrackedDrift).toBeCloseTo(0.00393 * 20 * 0.01, 8);
    expect(check.trackingFraction).toBe(1); // no change at all: the unit tracked fully
    expect(station.records.getRun(run.id).warmCheck).toEqual(check);
    station.close();
  });

  it('records points even when the fit cannot locate a null, storing no null numbers, and cannot pass', () => {
    const station = openTestStation(dir.path);
    const procedureId = station.records.listProcedures()[0].id;
    const { run } = startUnit(station.records, { serial: 'MG20-2611-0052', procedureId, operator: 'A. Tester' });
    // A trimmer with no effect: the same H3, level and phase, at every position, so by construction
    // the line's slope is zero and there is no null to locate (a division by zero in the estimate).
    const reading = readingWithThd(-62, { harmonics: [{ order: 3, frequencyHz: 42, levelDbc: -62, phaseDeg: 0 }] });
    for (const position of [0, 2, 4]) {
      station.records.recordTrimPoint({ runId: run.id, position, reading, live: null, stimulus: STIMULUS });
    }
    const detail = station.records.getRun(run.id);
    expect(detail.trimPoints).toHaveLength(3);
    const stored = station.db.prepare('SELECT assessment_json FROM trim_assessments WHERE run_id = ? AND after_sequence = 3').get(run.id) as {
      assessment_json: string;
    };
    for (const assessment of [detail.assessment!, JSON.parse(stored.assessment_json).value]) {
      expect(assessment.nullPosition).toBeNull();
      expect(assessment.nullPositionPlusMinus).toBeNull();
      expect(assessment.nullLevelDbc).toBeNull();
      expect(assessment.recommendedPosition).toBeNull();
    }
    // THD −62 dB is inside the −60 dB limit, yet with no null located the run cannot pass.
    expect(() => station.records.finishRun({ runId: run.id })).toThrow(/null was not located/);
    station.close();
  });

  it('leaves a sheet file found under the run\'s name (a crash before recording it, or another run before a restore) and saves its own', async () => {
    const station = openTestStation(dir.path);
    const procedureId = station.records.listProcedures()[0].id;
    const { run } = startUnit(station.records, { serial: 'MG20-2611-0053', procedureId, operator: 'A. Tester' });
    station.records.recordTrimPoint({ runId: run.id, position: 3, reading: readingWithThd(-62), live: null, stimulus: STIMULUS });
    station.records.finishRun({ runId: run.id, asFailure: true });
    const path = join(dir.path, 'sheets', sheetFileName('MG20-2611-0053', run.id));
    mkdirSync(join(dir.path, 'sheets'), { recursive: true });
    writeFileSync(path, '%PDF-1.4 written before the crash\n%%EOF\n');
    // A file there cannot prove it is this run's sheet (run ids come again after a restore): it is left
    // as it is, and this run's sheet is rendered and saved under the next free name.
    const rendered = new TextEncoder().encode('%PDF-1.4 this run\n%%EOF\n');
    const saved = await station.sheets.savePdf(run.id, async () => rendered);
    expect(saved.alreadySaved).toBe(false);
    expect(saved.path).not.toBe(path);
    expect(readFileSync(path, 'utf8')).toBe('%PDF-1.4 written before the crash\n%%EOF\n');
    expect(station.records.getRun(run.id).run.sheetPdfPath).toBe(saved.path);
    // Once recorded, a sheet is never replaced, and procedures never change.
    expect(() => station.db.prepare("UPDATE runs SET sheet_pdf_path = 'x' WHERE id = ?").run(run.id)).toThrow(/never replaced/);
    expect(() => station.db.prepare("UPDATE procedures SET revision = 'Z'").run()).toThrow(/never changes/);
    station.close();
  });

  it('migrates an older database forward and keeps a copy of it first', () => {
    const file = join(dir.path, DATABASE_FILE);
    const old = new Database(file);
    old.exec(MIGRATIONS[0]);
    old.pragma('user_version = 1');
    old.close();
    const db = openDatabase(file);
    expect(db.pragma('user_version', { simple: true })).toBe(MIGRATIONS.length);
    db.close();
    const copies = readdirSync(dir.path).filter((name) => name.startsWith(`${DATABASE_FILE}.before-schema-2-`));
    expect(copies).toHaveLength(1);
    const copy = new Database(join(dir.path, copies[0]));
    expect(copy.pragma('user_version', { simple: true })).toBe(1);
    copy.close();
  });

  it('opens a database from before issue 7: revision A and its points stay readable, new runs use revision B', () => {
    const file = join(dir.path, DATABASE_FILE);
    const old = new Database(file);
    old.exec(MIGRATIONS[0]);
    old.exec(MIGRATIONS[1]);
    old.pragma('user_version = 2');
    // Revision A as it was stored: no level window, no frequency tolerance.
    const { expectedLevelDbfs: _w, frequencyTolerancePercent: _f, ...trimA } = DEMO_PROCEDURE.trim;
    old.prepare('INSERT INTO procedures (code, revision, definition_json) VALUES (?, ?, ?)').run(
      DEMO_PROCEDURE.code,
      'A',
      JSON.stringify({ ...DEMO_PROCEDURE, revision: 'A', trim: trimA }),
    );
    old.prepare("INSERT INTO units (serial, model_code, created_at) VALUES ('MG20-2611-0060', 'MG-20', '2026-01-05T09:00:00.000Z')").run();
    old.prepare("INSERT INTO runs (unit_id, procedure_id, operator, station, started_at, limit_thd_db) VALUES (1, 1, 'A. Tester', 'b', '2026-01-05T09:00:00.000Z', -60)").run();
    old.prepare(
      "INSERT INTO trim_points (run_id, sequence, position, recorded_at, settled, thd_db, reading_json) VALUES (1, 1, 0, '2026-01-05T09:01:00.000Z', 1, -40, ?)",
    ).run(JSON.stringify(readingWithThd(-40)));
    old.close();

    const station = openTestStation(dir.path);
    expect(station.records.listProcedures().map((p) => p.definition.revision)).toEqual(['B']);
    const detail = station.records.getRun(1);
    expect(detail.run.procedureRevision).toBe('A');
    expect(detail.trimPoints).toMatchObject([{ sequence: 1, settled: true, inFit: true, stimulusHz: null, confirmedAt: null }]);
    expect(detail.warningLog).toEqual([]);
    expect(detail.run.verdictReasons).toEqual([]);
    station.close();
  });

  it('refuses a database written by a newer schema and leaves it untouched', () => {
    const file = join(dir.path, DATABASE_FILE);
    const newer = new Database(file);
    newer.pragma(`user_version = ${MIGRATIONS.length + 1}`);
    newer.close();
    expect(() => openDatabase(file)).toThrow(/newer Trimbench/);
    const check = new Database(file);
    expect(check.pragma('user_version', { simple: true })).toBe(MIGRATIONS.length + 1);
    check.close();
    // Not even switched to WAL: no journal files appear beside it.
    expect(existsSync(`${file}-wal`)).toBe(false);
  });
});
