import { afterEach, beforeEach, describe, expect, it } from 'vitest';
import Database from 'better-sqlite3';
import { existsSync, readFileSync } from 'node:fs';
import { join } from 'node:path';
import { MIGRATIONS, openDatabase } from '../../electron/services/database.ts';
import { DATABASE_FILE } from '../../electron/services/station.ts';
import { noCaller, openTestStation, readingWithThd, tempDir } from '../support/station.ts';

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
    const opened = station.records.openRun({ serial: 'MG20-2611-0042', procedureId, operator: 'A. Tester' });
    station.records.recordTrimPoint({ runId: opened.run.id, position: 0, reading: readingWithThd(-38) });
    station.records.recordTrimPoint({ runId: opened.run.id, position: 2.5, reading: readingWithThd(-47) });
    station.close();

    station = openTestStation(dir.path);
    const reopened = station.records.openRun({ serial: 'mg20-2611-0042', procedureId, operator: 'B. Other' });
    expect(reopened.run.id).toBe(opened.run.id);
    expect(reopened.run.operator).toBe('A. Tester');
    expect(reopened.trimPoints.map((p) => [p.sequence, p.position, p.reading.thdDb])).toEqual([
      [1, 0, -38],
      [2, 2.5, -47],
    ]);
    station.close();
  });

  it('judges the run at its last point, freezes it, and starts a retest as a new run', () => {
    const station = openTestStation(dir.path);
    const procedureId = station.records.listProcedures()[0].id;
    const { run } = station.records.openRun({ serial: 'MG20-2611-0043', procedureId, operator: 'A. Tester' });
    expect(() => station.records.finishRun(run.id)).toThrow(/at least one trim point/);
    station.records.recordTrimPoint({ runId: run.id, position: 0, reading: readingWithThd(-40) });
    station.records.recordTrimPoint({ runId: run.id, position: 4, reading: readingWithThd(-66) });
    const finished = station.records.finishRun(run.id);
    // Demo limit is THD ≤ −60 dB at the final point; −66 dB passes.
    expect(finished.run.verdict).toBe('pass');
    expect(finished.run.finalThdDb).toBe(-66);
    expect(() => station.records.recordTrimPoint({ runId: run.id, position: 5, reading: readingWithThd(-70) })).toThrow(/finished/);
    // The database itself refuses edits to a finished run, whatever the code does.
    expect(() => station.db.prepare("UPDATE runs SET verdict = 'fail' WHERE id = ?").run(run.id)).toThrow(/never edited/);
    expect(() => station.db.prepare('DELETE FROM trim_points').run()).toThrow(/never deleted/);

    const retest = station.records.openRun({ serial: 'MG20-2611-0043', procedureId, operator: 'A. Tester' });
    expect(retest.run.id).not.toBe(run.id);
    expect(retest.earlierRuns).toBe(1);
    expect(retest.trimPoints).toEqual([]);
    station.close();
  });

  it('fails a run whose last point is above the limit', () => {
    const station = openTestStation(dir.path);
    const procedureId = station.records.listProcedures()[0].id;
    const { run } = station.records.openRun({ serial: 'MG20-2611-0044', procedureId, operator: 'A. Tester' });
    station.records.recordTrimPoint({ runId: run.id, position: 3, reading: readingWithThd(-55) });
    expect(station.records.finishRun(run.id).run.verdict).toBe('fail');
    station.close();
  });

  it('refuses readings that are not measurements of the unit', () => {
    const station = openTestStation(dir.path);
    const procedureId = station.records.listProcedures()[0].id;
    const { run } = station.records.openRun({ serial: 'MG20-2611-0045', procedureId, operator: 'A. Tester' });
    expect(() =>
      station.records.recordTrimPoint({ runId: run.id, position: 1, reading: readingWithThd(-300, { flags: ['no-signal'] }) }),
    ).toThrow(/No signal/);
    expect(() =>
      station.records.recordTrimPoint({ runId: run.id, position: 1, reading: readingWithThd(-20, { flags: ['clipping'] }) }),
    ).toThrow(/clipping/);
    expect(() => station.records.recordTrimPoint({ runId: run.id, position: 11, reading: readingWithThd(-40) })).toThrow(
      /outside 0–10 turns/,
    );
    expect(station.records.getRun(run.id).trimPoints).toEqual([]);
    station.close();
  });

  it('writes the sheet PDF once, beside the database, and records its path', async () => {
    const station = openTestStation(dir.path);
    const procedureId = station.records.listProcedures()[0].id;
    const { run } = station.records.openRun({ serial: 'MG20-2611-0046', procedureId, operator: 'A. Tester' });
    station.records.recordTrimPoint({ runId: run.id, position: 3, reading: readingWithThd(-62) });
    await expect(station.sheets.savePdf(run.id, noCaller.printToPdf)).rejects.toThrow(/Finish the run/);
    station.records.finishRun(run.id);
    const saved = await station.sheets.savePdf(run.id, noCaller.printToPdf);
    expect(saved.alreadySaved).toBe(false);
    expect(saved.path.startsWith(join(dir.path, 'sheets'))).toBe(true);
    expect(readFileSync(saved.path, 'latin1').startsWith('%PDF')).toBe(true);
    expect((await station.sheets.savePdf(run.id, noCaller.printToPdf)).alreadySaved).toBe(true);
    expect(station.records.getRun(run.id).run.sheetPdfPath).toBe(saved.path);
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
    expect(existsSync(`${file}.before-schema-${MIGRATIONS.length + 1}`)).toBe(false);
  });
});
