// Units, runs and trim points. Every method takes already-validated input (main parses each
// payload with the IPC contract first) and checks what only the database knows.

import type { Reading } from '../../shared/measurement/reading.ts';
import { trimAssessmentSchema, type Run, type RunDetail, type StoredProcedure, type TrimPoint, type WarmCheck } from '../../shared/ipc/contract.ts';
import { procedureSchema, type Procedure } from '../../shared/procedures/procedure.ts';
import { checkSerial } from '../../shared/records/serial.ts';
import { judgeTrim } from '../../shared/records/verdict.ts';
import { assessTrim, type TrimAssessment } from '../../shared/trim/assessment.ts';
import { warmRecheck, type LiveSeries } from '../../shared/trim/trim-assistant.ts';
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
  verdict_reason: string | null;
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
    finishRun: db.prepare('UPDATE runs SET finished_at = ?, verdict = ?, verdict_reason = ?, final_thd_db = ? WHERE id = ?'),
    insertAssessment: db.prepare('INSERT INTO trim_assessments (run_id, after_sequence, assessed_at, assessment_json) VALUES (?, ?, ?, ?)'),
    assessments: db.prepare<[number], { after_sequence: number; assessment_json: string }>(
      'SELECT after_sequence, assessment_json FROM trim_assessments WHERE run_id = ? ORDER BY after_sequence',
    ),
    insertWarmCheck: db.prepare(
      `INSERT INTO warm_checks (run_id, recorded_at, position, cold_temperature_c, warm_temperature_c, reading_json, result_json)
       VALUES (?, ?, ?, ?, ?, ?, ?)`,
    ),
    latestWarmCheck: db.prepare<[number], { result_json: string }>('SELECT result_json FROM warm_checks WHERE run_id = ? ORDER BY id DESC LIMIT 1'),
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
      verdictReason: row.verdict_reason,
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
    const assessments = statements.assessments.all(runId).map((a) => ({
      afterSequence: a.after_sequence,
      assessment: JSON.parse(a.assessment_json) as TrimAssessment,
    }));
    // Each warning as first raised: the record of what the technician was told, and when.
    const warningsRaised: RunDetail['warningsRaised'] = [];
    for (const { afterSequence, assessment } of assessments) {
      for (const warning of assessment.warnings) {
        if (!warningsRaised.some((w) => w.id === warning.id)) warningsRaised.push({ ...warning, afterSequence });
      }
    }
    const warm = statements.latestWarmCheck.get(runId);
    return {
      run: toRun(row),
      trimPoints: statements.trimPoints.all(runId).map(toTrimPoint),
      assessment: assessments.at(-1)?.assessment ?? null,
      warningsRaised,
      warmCheck: warm ? (JSON.parse(warm.result_json) as WarmCheck) : null,
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

    /** Writes the point and the assistant's assessment after it, in one transaction. */
    recordTrimPoint(request: { runId: number; position: number; reading: Reading; live: LiveSeries | null }): {
      point: TrimPoint;
      assessment: TrimAssessment;
    } {
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
      return db.transaction(() => {
        const sequence = statements.nextSequence.get(row.id)?.next ?? 1;
        const recordedAt = timestamp();
        const id = statements.insertTrimPoint.run(
          row.id,
          sequence,
          position,
          recordedAt,
          reading.settled ? 1 : 0,
          reading.thdDb,
          JSON.stringify(reading),
        ).lastInsertRowid;
        const point = toTrimPoint(statements.trimPointById.get(id)!);
        // Checked against the contract before anything commits: a record the page cannot read is not written.
        const assessment = trimAssessmentSchema.parse(assessTrim(statements.trimPoints.all(row.id).map(toTrimPoint), trim, request.live));
        statements.insertAssessment.run(row.id, sequence, recordedAt, JSON.stringify(assessment));
        return { point, assessment };
      })();
    },

    /**
     * A warm re-check at the final setting: a second reading later, with both temperatures, compared
     * with the last trim point to show how well the unit's own thermal tracking held.
     */
    recordWarmCheck(request: { runId: number; coldTemperatureC: number; warmTemperatureC: number; reading: Reading }): WarmCheck {
      const row = runRow(request.runId);
      if (row.finished_at) throw new ExpectedFailure(`Run ${row.id} is finished; the warm re-check belongs before finishing.`);
      const { trim } = parseProcedure(row.definition_json);
      const points = statements.trimPoints.all(row.id).map(toTrimPoint);
      const last = points.at(-1);
      if (!last || points.length < 2) throw new ExpectedFailure('Record the trim (at least two points) before the warm re-check.');
      if (request.reading.flags.includes('no-signal')) throw new ExpectedFailure('No signal at the input: the warm reading cannot be recorded.');
      if (request.reading.flags.includes('clipping')) {
        throw new ExpectedFailure('The input is clipping: the warm reading cannot be recorded. Lower the level into the interface.');
      }
      const order = trim.harmonicOrder;
      const harmonic = (reading: Reading) => reading.harmonics.find((h) => h.order === order);
      const cold = harmonic(last.reading);
      const warm = harmonic(request.reading);
      const safeEnd = harmonic(points[0].reading);
      if (!cold || !warm || !safeEnd) throw new ExpectedFailure(`H${order} is not in the readings (above Nyquist?): no warm re-check possible.`);
      const check = warmRecheck(
        { levelDbc: cold.levelDbc, phaseDeg: cold.phaseDeg, temperatureC: request.coldTemperatureC },
        { levelDbc: warm.levelDbc, phaseDeg: warm.phaseDeg, temperatureC: request.warmTemperatureC },
        safeEnd.levelDbc,
      );
      const result: WarmCheck = {
        recordedAt: timestamp(),
        position: last.position,
        coldTemperatureC: request.coldTemperatureC,
        warmTemperatureC: request.warmTemperatureC,
        coldLevelDbc: cold.levelDbc,
        warmLevelDbc: warm.levelDbc,
        trackingFraction: check.trackingFraction,
        measuredDrift: check.measuredDrift,
        untrackedDrift: check.untrackedDrift,
      };
      statements.insertWarmCheck.run(
        row.id,
        result.recordedAt,
        last.position,
        request.coldTemperatureC,
        request.warmTemperatureC,
        JSON.stringify(request.reading),
        JSON.stringify(result),
      );
      return result;
    },

    /** Judges the run on THD at its last trim point (and not left past the null) and freezes it. */
    finishRun(runId: number): RunDetail {
      const row = runRow(runId);
      if (row.finished_at) return runDetail(runId);
      const points = statements.trimPoints.all(runId);
      const last = points.at(-1);
      if (!last) throw new ExpectedFailure('Record at least one trim point before finishing the run.');
      const finalThdDb = toTrimPoint(last).reading.thdDb;
      const { verdict, reason } = judgeTrim(finalThdDb, row.limit_thd_db, runDetail(runId).assessment?.side ?? null);
      statements.finishRun.run(timestamp(), verdict, reason, finalThdDb, runId);
      return runDetail(runId);
    },

    setSheetPath(runId: number, path: string): void {
      statements.setSheetPath.run(path, runId);
    },
  };
}
