// Units, runs and trim points. Every method takes already-validated input (main parses each
// payload with the IPC contract first) and checks what only the database knows.

import type { Reading } from '../../shared/measurement/reading.ts';
import type { Run, RunDetail, StoredProcedure, TrimPoint } from '../../shared/ipc/contract.ts';
import { procedureSchema, type Procedure } from '../../shared/procedures/procedure.ts';
import { checkSerial } from '../../shared/records/serial.ts';
import { judgeThd } from '../../shared/records/verdict.ts';
import type { Db } from './database.ts';
import { ExpectedFailure } from './expected-failure.ts';

interface RunRow {
  id: number;
  serial: string;
  procedure_id: number;
  definition_json: string;
  operator: string;
  station: string;
  started_at: string;
  finished_at: string | null;
  verdict: 'pass' | 'fail' | null;
  final_thd_db: number | null;
  limit_thd_db: number;
  sheet_pdf_path: string | null;
  unit_id: number;
}

interface TrimPointRow {
  id: number;
  sequence: number;
  position: number;
  recorded_at: string;
  settled: number;
  reading_json: string;
}

export interface RecordsOptions {
  stationName: string;
  now?: () => Date;
}

export type Records = ReturnType<typeof createRecords>;

export function createRecords(db: Db, { stationName, now = () => new Date() }: RecordsOptions) {
  const timestamp = () => now().toISOString();

  const runSelect = `
    SELECT runs.*, units.serial, procedures.definition_json
    FROM runs JOIN units ON units.id = runs.unit_id JOIN procedures ON procedures.id = runs.procedure_id`;
  const statements = {
    procedureByKey: db.prepare<[string, string], { id: number }>('SELECT id FROM procedures WHERE code = ? AND revision = ?'),
    insertProcedure: db.prepare('INSERT INTO procedures (code, revision, definition_json) VALUES (?, ?, ?)'),
    procedures: db.prepare<[], { id: number; definition_json: string }>('SELECT id, definition_json FROM procedures ORDER BY id'),
    procedureById: db.prepare<[number], { id: number; definition_json: string }>(
      'SELECT id, definition_json FROM procedures WHERE id = ?',
    ),
    unitBySerial: db.prepare<[string], { id: number; model_code: string }>('SELECT id, model_code FROM units WHERE serial = ?'),
    insertUnit: db.prepare('INSERT INTO units (serial, model_code, created_at) VALUES (?, ?, ?)'),
    openRunOfUnit: db.prepare<[number, number], { id: number }>(
      'SELECT id FROM runs WHERE unit_id = ? AND procedure_id = ? AND finished_at IS NULL ORDER BY id DESC LIMIT 1',
    ),
    insertRun: db.prepare(
      'INSERT INTO runs (unit_id, procedure_id, operator, station, started_at, limit_thd_db) VALUES (?, ?, ?, ?, ?, ?)',
    ),
    runById: db.prepare<[number], RunRow>(`${runSelect} WHERE runs.id = ?`),
    earlierRuns: db.prepare<[number, number], { count: number }>(
      'SELECT COUNT(*) AS count FROM runs WHERE unit_id = ? AND id < ? AND finished_at IS NOT NULL',
    ),
    trimPoints: db.prepare<[number], TrimPointRow>('SELECT * FROM trim_points WHERE run_id = ? ORDER BY sequence'),
    nextSequence: db.prepare<[number], { next: number }>(
      'SELECT COALESCE(MAX(sequence), 0) + 1 AS next FROM trim_points WHERE run_id = ?',
    ),
    insertTrimPoint: db.prepare(
      `INSERT INTO trim_points (run_id, sequence, position, recorded_at, settled, thd_db, reading_json)
       VALUES (?, ?, ?, ?, ?, ?, ?)`,
    ),
    trimPointById: db.prepare<[number | bigint], TrimPointRow>('SELECT * FROM trim_points WHERE id = ?'),
    finishRun: db.prepare('UPDATE runs SET finished_at = ?, verdict = ?, final_thd_db = ? WHERE id = ?'),
    setSheetPath: db.prepare('UPDATE runs SET sheet_pdf_path = ? WHERE id = ? AND sheet_pdf_path IS NULL'),
  };

  function parseProcedure(json: string): Procedure {
    return procedureSchema.parse(JSON.parse(json));
  }

  function procedureById(id: number): Procedure {
    const row = statements.procedureById.get(id);
    if (!row) throw new ExpectedFailure(`There is no procedure with id ${id}.`);
    return parseProcedure(row.definition_json);
  }

  function toRun(row: RunRow): Run {
    const procedure = parseProcedure(row.definition_json);
    return {
      id: row.id,
      serial: row.serial,
      procedureId: row.procedure_id,
      procedureCode: procedure.code,
      procedureRevision: procedure.revision,
      procedureTitle: procedure.title,
      invented: procedure.invented,
      modelCode: procedure.model.code,
      modelName: procedure.model.name,
      operator: row.operator,
      station: row.station,
      startedAt: row.started_at,
      finishedAt: row.finished_at,
      verdict: row.verdict,
      finalThdDb: row.final_thd_db,
      limitThdDb: row.limit_thd_db,
      sheetPdfPath: row.sheet_pdf_path,
    };
  }

  function toTrimPoint(row: TrimPointRow): TrimPoint {
    return {
      id: row.id,
      sequence: row.sequence,
      position: row.position,
      recordedAt: row.recorded_at,
      settled: row.settled === 1,
      reading: JSON.parse(row.reading_json) as Reading,
    };
  }

  function runRow(runId: number): RunRow {
    const row = statements.runById.get(runId);
    if (!row) throw new ExpectedFailure(`There is no run with id ${runId}.`);
    return row;
  }

  function runDetail(runId: number): RunDetail {
    const row = runRow(runId);
    return {
      run: toRun(row),
      trimPoints: statements.trimPoints.all(runId).map(toTrimPoint),
      earlierRuns: statements.earlierRuns.get(row.unit_id, runId)?.count ?? 0,
    };
  }

  return {
    /** Stores a procedure revision once; returns its id. A revision, once stored, never changes. */
    ensureProcedure(definition: Procedure): number {
      const existing = statements.procedureByKey.get(definition.code, definition.revision);
      if (existing) return existing.id;
      const info = statements.insertProcedure.run(definition.code, definition.revision, JSON.stringify(definition));
      return Number(info.lastInsertRowid);
    },

    listProcedures(): StoredProcedure[] {
      return statements.procedures.all().map((row) => ({ id: row.id, definition: parseProcedure(row.definition_json) }));
    },

    /** Resumes the unit's unfinished run of this procedure, or starts a new one (a retest after a finished run). */
    openRun(request: { serial: string; procedureId: number; operator: string }): RunDetail {
      const procedure = procedureById(request.procedureId);
      const serialCheck = checkSerial(request.serial, procedure);
      if (!serialCheck.ok) throw new ExpectedFailure(serialCheck.message);
      const serial = serialCheck.serial;
      const runId = db.transaction(() => {
        let unit = statements.unitBySerial.get(serial);
        if (!unit) {
          const info = statements.insertUnit.run(serial, procedure.model.code, timestamp());
          unit = { id: Number(info.lastInsertRowid), model_code: procedure.model.code };
        } else if (unit.model_code !== procedure.model.code) {
          throw new ExpectedFailure(
            `Serial ${serial} is recorded as a ${unit.model_code}, not a ${procedure.model.code}. Check the unit and the procedure.`,
          );
        }
        const open = statements.openRunOfUnit.get(unit.id, request.procedureId);
        if (open) return open.id;
        const info = statements.insertRun.run(
          unit.id,
          request.procedureId,
          request.operator,
          stationName,
          timestamp(),
          procedure.trim.limitThdDb,
        );
        return Number(info.lastInsertRowid);
      })();
      return runDetail(runId);
    },

    getRun: runDetail,

    recordTrimPoint(request: { runId: number; position: number; reading: Reading }): TrimPoint {
      const row = runRow(request.runId);
      if (row.finished_at) throw new ExpectedFailure(`Run ${row.id} is finished; start a retest to record more trim points.`);
      const { trim } = parseProcedure(row.definition_json);
      const { position, reading } = request;
      if (position < trim.positionMin || position > trim.positionMax) {
        throw new ExpectedFailure(
          `Trimmer position ${position} is outside ${trim.positionMin}–${trim.positionMax} ${trim.positionUnit}.`,
        );
      }
      if (reading.flags.includes('no-signal')) {
        throw new ExpectedFailure('No signal at the input: this reading cannot be recorded. Check the cabling and the generator.');
      }
      if (reading.flags.includes('clipping')) {
        throw new ExpectedFailure('The input is clipping: this reading cannot be recorded. Lower the level into the interface.');
      }
      const id = db.transaction(() => {
        const sequence = statements.nextSequence.get(row.id)?.next ?? 1;
        return statements.insertTrimPoint.run(
          row.id,
          sequence,
          position,
          timestamp(),
          reading.settled ? 1 : 0,
          reading.thdDb,
          JSON.stringify(reading),
        ).lastInsertRowid;
      })();
      return toTrimPoint(statements.trimPointById.get(id)!);
    },

    /** Judges the run on THD at its last trim point and freezes it. */
    finishRun(runId: number): RunDetail {
      const row = runRow(runId);
      if (row.finished_at) return runDetail(runId);
      const points = statements.trimPoints.all(runId);
      const last = points.at(-1);
      if (!last) throw new ExpectedFailure('Record at least one trim point before finishing the run.');
      const finalThdDb = toTrimPoint(last).reading.thdDb;
      statements.finishRun.run(timestamp(), judgeThd(finalThdDb, row.limit_thd_db), finalThdDb, runId);
      return runDetail(runId);
    },

    setSheetPath(runId: number, path: string): void {
      statements.setSheetPath.run(path, runId);
    },
  };
}
