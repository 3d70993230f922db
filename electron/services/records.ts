// Units, runs and trim points. Every method takes already-validated input (main parses each
// payload with the IPC contract first) and checks what only the database knows.

import { z } from 'zod';
import type { Reading } from '../../shared/measurement/reading.ts';
import {
  measurementSchema,
  readingSchema,
  runDetailSchema,
  stepResultSchema,
  scopeRecordSchema,
  responseCurveSchema,
  trimAssessmentSchema,
  warmCheckSchema,
  type Run,
  type RunDetail,
  type StepResult,
  type StoredProcedure,
  type TrimPoint,
  type WarmCheck,
  type WarningLogEntry,
} from '../../shared/ipc/contract.ts';
import { inputDbuAtFullScaleFor, setupChanges, type AudioSetup } from '../../shared/calibration/station-calibration.ts';
import type { StationSettings } from '../../shared/calibration/station-settings.ts';
import { asSentences } from '../../shared/format.ts';
import { procedureSchema, type Procedure } from '../../shared/procedures/procedure.ts';
import { checkProcedureFile, procedureFileSchema, upgradeProcedure, type CheckStep, type ProcedureFile, type ProcedureStep } from '../../shared/procedures/procedure-file.ts';
import { judgeScopeRecord } from '../../shared/procedures/ringing.ts';
import { judgeMaxLevel, type MaxLevelPoint } from '../../shared/procedures/max-level.ts';
import { correctByChain, expectedCapturePeak, judgeResponse, responseCurve, sweepSpecFor, whyCaptureUnusable } from '../../shared/procedures/response.ts';
import { analyzeSweepResponse } from '../../shared/measurement/sweep-response.ts';
import { isCheckStep, judgeLimit, measureCheckStep, measurement, runLevels, type CheckOutcome, type Measurement } from '../../shared/procedures/check-steps.ts';
import { judgeUnit, laterStepResult } from '../../shared/procedures/unit-verdict.ts';
import { quantityLabel } from '../../shared/procedures/step-text.ts';
import { trimView } from '../../shared/procedures/trim-view.ts';
import { thdDbFromHarmonics } from '../../shared/records/reading-check.ts';
import { checkSerial } from '../../shared/records/serial.ts';
import { whyNotRecordable, type StimulusSetting } from '../../shared/records/stimulus-check.ts';
import { judgeTrimRun, type TrimJudgement } from '../../shared/records/verdict.ts';
import { assessTrim, type TrimAssessment } from '../../shared/trim/assessment.ts';
import { warmRecheck, type LiveSeries } from '../../shared/trim/trim-assistant.ts';
import { openLiveWarnings, warningsRaised } from '../../shared/trim/warning-tracker.ts';
import type { Calibrations } from './calibrations.ts';
import { isDatabaseDamaged, type Db } from './database.ts';
import { CannotPass, ExpectedFailure, RetestNeedsReason } from './expected-failure.ts';
import { checkSealed, fromStoredJson, prepareSealedInserts, sealRow, toStoredJson, UnreadableRecord, valuesOf } from './stored-record.ts';

/** A stored procedure: schema 1 as built in, schema 2 as imported from a file. */
const storedProcedureDefinition = z.discriminatedUnion('schemaVersion', [procedureSchema, procedureFileSchema]);

const liveSeriesSchema = z.object({ levelsDbfs: z.array(z.number()), lfDbfs: z.array(z.number()) });
const reasonsSchema = z.array(z.string());
const stepStimulusSchema = stepResultSchema.shape.stimulus;
const measurementsSchema = z.array(measurementSchema);

interface RunRow {
  id: number;
  crc: number | null;
  serial: string;
  unit_model_code: string;
  unit_created_at: string;
  unit_crc: number | null;
  procedure_id: number;
  procedure_code: string;
  procedure_revision: string;
  procedure_crc: number | null;
  definition_json: string;
  operator: string;
  station: string;
  started_at: string;
  finished_at: string | null;
  verdict: 'pass' | 'fail' | null;
  verdict_reason: string | null;
  verdict_reasons_json: string | null;
  final_thd_db: number | null;
  limit_thd_db: number;
  sheet_pdf_path: string | null;
  calibration_id: number | null;
  chain_check_id: number | null;
  calibration_expires_at: string | null;
  retest_of: number | null;
  retest_reason: string | null;
  lot: string | null;
  station_id: number | null;
  unit_id: number;
}

interface StepResultRow {
  id: number;
  crc: number | null;
  run_id: number;
  step_id: string;
  kind: string;
  attempt: number;
  recorded_at: string;
  verdict: string;
  reasons_json: string;
  stimulus_json: string | null;
  readings_json: string | null;
}

interface MeasurementRow {
  id: number;
  crc: number | null;
  step_result_id: number;
  run_id: number;
  quantity: string;
  value: number | null;
  unit: string;
  low: number | null;
  high: number | null;
  verdict: string;
  note: string | null;
}

interface TrimPointRow {
  id: number;
  crc: number | null;
  run_id: number;
  sequence: number;
  position: number;
  recorded_at: string;
  settled: number;
  in_fit: number;
  stimulus_hz: number | null;
  stimulus_level_dbfs: number | null;
  thd_db: number;
  reading_json: string;
  /** The live series sent with the point; null when none was (and for points stored before it was kept). */
  live_json: string | null;
}

interface WarningChangeRow {
  crc: number | null;
  run_id: number;
  warning_id: WarningLogEntry['id'];
  change: WarningLogEntry['change'];
  at: string;
  position: number;
  after_sequence: number;
  seen: string;
  source: WarningLogEntry['source'];
}

interface ProcedureRow {
  id: number;
  crc: number | null;
  code: string;
  revision: string;
  definition_json: string;
}

interface AssessmentRow {
  id: number;
  crc: number | null;
  run_id: number;
  after_sequence: number;
  assessed_at: string;
  assessment_json: string;
}

interface ConfirmationRow {
  id: number;
  crc: number | null;
  run_id: number;
  point_id: number;
  after_sequence: number;
  confirmed_at: string;
  assessment_json: string;
}

interface WarmCheckRow {
  id: number;
  crc: number | null;
  run_id: number;
  recorded_at: string;
  position: number;
  cold_temperature_c: number;
  warm_temperature_c: number;
  reading_json: string;
  result_json: string;
}

/** A warning change as the page's live watch reports it. */
export interface ReportedWarningChange {
  id: WarningLogEntry['id'];
  change: WarningLogEntry['change'];
  position: number;
  seen: string;
}

export interface UnitHistory {
  serial: string;
  modelCode: string;
  runs: ({ run: Run; runId?: undefined; finalPosition: number | null; points: number; unreadable: null } | { run: null; runId: number; finalPosition: null; points: 0; unreadable: string })[];
}

export interface RecordedPoint {
  point: TrimPoint;
  assessment: TrimAssessment;
  warningLog: WarningLogEntry[];
  /** The run as main now holds it after the point. */
  detail: RunDetail;
}

export interface RecordsOptions {
  /** The station's name as its settings hold it now (it is editable). */
  stationName: () => string;
  /** The station's calibrations: a run records the one it was measured with. */
  calibrations?: Calibrations;
  settings?: () => StationSettings;
  now?: () => Date;
  /** Told of every stored record found unreadable, with the detail the technician is not shown. */
  onUnreadable?: (record: UnreadableRecord) => void;
  /** Why the records cannot be written now (the station decides), or null while they can. */
  whyNotWritable?: () => string | null;
}

export type Records = ReturnType<typeof createRecords>;

/** Revision labels in order: as text, with runs of digits compared as numbers (A < B, 2 < 10). */
export function compareRevisions(a: string, b: string): number {
  return a.localeCompare(b, 'en', { numeric: true, sensitivity: 'base' });
}

export function createRecords(
  db: Db,
  { stationName, calibrations, settings, now = () => new Date(), onUnreadable = () => {}, whyNotWritable = () => null }: RecordsOptions,
) {
  const timestamp = () => now().toISOString();

  /** Every write asks first: a station whose file is damaged or unwritable records nothing. */
  function refuseUnlessWritable(): void {
    const refusal = whyNotWritable();
    if (refusal !== null) throw new ExpectedFailure(refusal);
  }

  const runSelect = `
    SELECT runs.*, units.serial, units.model_code AS unit_model_code, units.created_at AS unit_created_at, units.crc AS unit_crc,
      procedures.code AS procedure_code, procedures.revision AS procedure_revision, procedures.definition_json,
      procedures.crc AS procedure_crc
    FROM runs JOIN units ON units.id = runs.unit_id JOIN procedures ON procedures.id = runs.procedure_id`;
  const statements = {
    procedureByKey: db.prepare<[string, string], { id: number }>('SELECT id FROM procedures WHERE code = ? AND revision = ?'),
    // The newest revision of each procedure: new runs use it; older runs keep naming their own.
    procedures: db.prepare<[], ProcedureRow>(
      'SELECT * FROM procedures WHERE id IN (SELECT MAX(id) FROM procedures GROUP BY code) ORDER BY id',
    ),
    procedureById: db.prepare<[number], ProcedureRow>('SELECT * FROM procedures WHERE id = ?'),
    newestRevisionOf: db.prepare<[number], { id: number; revision: string }>(
      'SELECT id, revision FROM procedures WHERE id = (SELECT MAX(id) FROM procedures WHERE code = (SELECT code FROM procedures WHERE id = ?))',
    ),
    unitBySerial: db.prepare<[string], { id: number; model_code: string }>('SELECT id, model_code FROM units WHERE serial = ?'),
    newestRevisionOfCode: db.prepare<[string], { revision: string }>('SELECT revision FROM procedures WHERE code = ? ORDER BY id DESC LIMIT 1'),
    latestRunOfUnit: db.prepare<[number], { id: number }>('SELECT id FROM runs WHERE unit_id = ? ORDER BY id DESC LIMIT 1'),
    runsOfUnit: db.prepare<[number], { id: number }>('SELECT id FROM runs WHERE unit_id = ? ORDER BY id'),
    latestFinishedRunOf: db.prepare<[number, number], RunRow>(
      `${runSelect} WHERE runs.unit_id = ? AND procedures.code = (SELECT code FROM procedures WHERE id = ?) AND runs.finished_at IS NOT NULL ORDER BY runs.id DESC LIMIT 1`,
    ),
    // The unit's unfinished run of this procedure, under whichever revision it was started: a newer
    // revision imported meanwhile must not let a second run start beside it.
    openRunOfUnit: db.prepare<[number, number], { id: number; operator: string }>(
      `SELECT runs.id, runs.operator FROM runs JOIN procedures ON procedures.id = runs.procedure_id
       WHERE runs.unit_id = ? AND runs.finished_at IS NULL AND procedures.code = (SELECT code FROM procedures WHERE id = ?)
       ORDER BY runs.id DESC LIMIT 1`,
    ),
    // Any unfinished run of the unit: the database allows one (one_open_run_per_unit).
    anyOpenRunOfUnit: db.prepare<[number], { id: number; code: string }>(
      `SELECT runs.id, procedures.code FROM runs JOIN procedures ON procedures.id = runs.procedure_id
       WHERE runs.unit_id = ? AND runs.finished_at IS NULL ORDER BY runs.id DESC LIMIT 1`,
    ),
    stationByName: db.prepare<[string], { id: number }>('SELECT id FROM stations WHERE name = ?'),
    runById: db.prepare<[number], RunRow>(`${runSelect} WHERE runs.id = ?`),
    stepResults: db.prepare<[number], StepResultRow>('SELECT * FROM step_results WHERE run_id = ? ORDER BY id'),
    measurements: db.prepare<[number], MeasurementRow>('SELECT * FROM measurements WHERE run_id = ? ORDER BY id'),
    attemptsOfStep: db.prepare<[number, string], { count: number }>('SELECT COUNT(*) AS count FROM step_results WHERE run_id = ? AND step_id = ?'),
    earlierRuns: db.prepare<[number, number], { count: number }>(
      'SELECT COUNT(*) AS count FROM runs WHERE unit_id = ? AND id < ? AND finished_at IS NOT NULL',
    ),
    trimPoints: db.prepare<[number], TrimPointRow>('SELECT * FROM trim_points WHERE run_id = ? ORDER BY sequence'),
    nextSequence: db.prepare<[number], { next: number }>(
      'SELECT COALESCE(MAX(sequence), 0) + 1 AS next FROM trim_points WHERE run_id = ?',
    ),
    trimPointById: db.prepare<[number | bigint], TrimPointRow>('SELECT * FROM trim_points WHERE id = ?'),
    finishRun: db.prepare(
      `UPDATE runs SET finished_at = @finished_at, verdict = @verdict, verdict_reason = @verdict_reason,
         verdict_reasons_json = @verdict_reasons_json, final_thd_db = @final_thd_db, crc = @crc WHERE id = @id`,
    ),
    // Assessments after points and after confirmations, in the order they were made: a confirmation
    // always follows the assessment of the point it came after.
    assessments: db.prepare<[number], AssessmentRow>('SELECT * FROM trim_assessments WHERE run_id = ?'),
    confirmations: db.prepare<[number], ConfirmationRow>('SELECT * FROM point_confirmations WHERE run_id = ?'),
    warningLog: db.prepare<[number], WarningChangeRow>('SELECT * FROM warning_changes WHERE run_id = ? ORDER BY id'),
    latestWarmCheck: db.prepare<[number], WarmCheckRow>('SELECT * FROM warm_checks WHERE run_id = ? ORDER BY id DESC LIMIT 1'),
    setSheetPath: db.prepare('UPDATE runs SET sheet_pdf_path = ?, crc = ? WHERE id = ? AND sheet_pdf_path IS NULL'),
  };

  const insertSealed = prepareSealedInserts(db);

  function readProcedure(row: ProcedureRow): Procedure {
    const what = `procedure ${row.code} revision ${row.revision}`;
    checkSealed('procedures', row, what);
    const stored = fromStoredJson(row.definition_json, storedProcedureDefinition, what);
    if (stored.schemaVersion === 1) return stored;
    const view = trimView(stored);
    if (!view) throw new UnreadableRecord(what, 'a schema-2 procedure without a trim step');
    return view;
  }

  /** Whether the stored revision holds exactly this definition (both as the schema reads them). */
  function storedAs(id: number, definition: Procedure | ProcedureFile): boolean {
    const row = statements.procedureById.get(id)!;
    const what = `procedure ${row.code} revision ${row.revision}`;
    checkSealed('procedures', row, what);
    return JSON.stringify(fromStoredJson(row.definition_json, storedProcedureDefinition, what)) === JSON.stringify(definition);
  }

  function procedureById(id: number): Procedure {
    const row = statements.procedureById.get(id);
    if (!row) throw new ExpectedFailure(`There is no procedure with id ${id}.`);
    return readProcedure(row);
  }

  /** The run's procedure, its row and the run's unit checked against their check values. */
  function runProcedure(row: RunRow): Procedure {
    checkSealed('runs', row, `run ${row.id}`);
    checkSealed('units', { serial: row.serial, model_code: row.unit_model_code, created_at: row.unit_created_at, crc: row.unit_crc }, `unit ${row.serial}`);
    return readProcedure({ id: row.procedure_id, crc: row.procedure_crc, code: row.procedure_code, revision: row.procedure_revision, definition_json: row.definition_json });
  }

  /** The run's procedure revision whole: a schema-1 one as its upgrade (notice and trim steps). */
  function runProcedureFile(row: RunRow): ProcedureFile {
    runProcedure(row);
    const stored = fromStoredJson(row.definition_json, storedProcedureDefinition, `procedure ${row.procedure_code} revision ${row.procedure_revision}`);
    return stored.schemaVersion === 1 ? upgradeProcedure(stored) : stored;
  }

  function toRun(row: RunRow): Run {
    const procedure = runProcedure(row);
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
      verdictReasons: row.verdict_reasons_json
        ? fromStoredJson(row.verdict_reasons_json, reasonsSchema, `verdict of run ${row.id}`)
        : row.verdict_reason
          ? [row.verdict_reason]
          : [],
      finalThdDb: row.final_thd_db,
      limitThdDb: row.limit_thd_db,
      sheetPdfPath: row.sheet_pdf_path,
      retestOf: row.retest_of,
      retestReason: row.retest_reason,
      lot: row.lot,
      // Runs opened since steps were recorded name their station row (migration 8); older ones do not.
      walked: row.station_id !== null,
    };
  }

  function toTrimPoint(row: TrimPointRow, confirmed: ReadonlyMap<number, string>): TrimPoint {
    const what = `trim point ${row.sequence} of run ${row.run_id}`;
    checkSealed('trim_points', row, what);
    return {
      id: row.id,
      sequence: row.sequence,
      position: row.position,
      recordedAt: row.recorded_at,
      settled: row.settled === 1,
      inFit: row.in_fit === 1 || confirmed.has(row.id),
      confirmedAt: confirmed.get(row.id) ?? null,
      stimulusHz: row.stimulus_hz,
      // Through the schema: readings stored before a field existed get its default, never undefined.
      reading: fromStoredJson(row.reading_json, readingSchema, what),
    };
  }

  function confirmations(runId: number): ConfirmationRow[] {
    const rows = statements.confirmations.all(runId);
    for (const row of rows) checkSealed('point_confirmations', row, `confirmation of a point of run ${runId}`);
    return rows;
  }

  function trimPoints(runId: number): TrimPoint[] {
    const confirmed = new Map(confirmations(runId).map((c) => [c.point_id, c.confirmed_at]));
    return statements.trimPoints.all(runId).map((row) => toTrimPoint(row, confirmed));
  }

  /**
   * Assessments after points and after confirmations, in the order they were made: a confirmation
   * always follows the assessment of the point it came after.
   */
  function assessmentsOf(runId: number): { afterSequence: number; assessment: TrimAssessment }[] {
    const made = [
      ...statements.assessments.all(runId).map((row) => {
        checkSealed('trim_assessments', row, `assessment after point ${row.after_sequence} of run ${runId}`);
        return { row, kind: 0 };
      }),
      ...confirmations(runId).map((row) => ({ row, kind: 1 })),
    ].sort((a, b) => a.row.after_sequence - b.row.after_sequence || a.kind - b.kind || a.row.id - b.row.id);
    return made.map(({ row }) => ({
      afterSequence: row.after_sequence,
      assessment: fromStoredJson(row.assessment_json, trimAssessmentSchema, `assessment after point ${row.after_sequence} of run ${runId}`),
    }));
  }

  function warningLog(runId: number): WarningLogEntry[] {
    return statements.warningLog.all(runId).map((row) => {
      checkSealed('warning_changes', row, `warning log of run ${runId}`);
      return {
      id: row.warning_id,
      change: row.change,
      at: row.at,
      position: row.position,
      afterSequence: row.after_sequence,
      seen: row.seen,
      source: row.source,
      };
    });
  }

  /**
   * The assessment of the points the fit may use (settled, or confirmed). Checked against the
   * contract before anything commits: a record the page cannot read is not written.
   */
  function assess(runId: number, trim: Procedure['trim'], confirming: number | null = null): TrimAssessment {
    // Only the points in the fit are passed for now; once assessTrim honours inFit itself, it may be
    // given every point with its flag.
    const inFit = trimPoints(runId).filter((p) => p.inFit || p.id === confirming);
    const points = inFit.map((p) => ({ position: p.position, reading: p.reading, inFit: true }));
    // The warnings that need a series (level wander, rising sub-audio) are judged at the latest
    // point in the fit, from the series recorded with it: an unsettled point left out lends it none,
    // and confirming an earlier one does not make the final point's vanish.
    const latest = inFit.at(-1);
    const liveJson = latest ? (statements.trimPointById.get(latest.id)?.live_json ?? null) : null;
    const live: LiveSeries | null = liveJson === null ? null : fromStoredJson(liveJson, liveSeriesSchema, `live readings of point ${latest!.sequence} of run ${runId}`);
    return trimAssessmentSchema.parse(assessTrim(points, trim, live));
  }

  /** Logs the warnings that appeared or went away from one assessment to the next. */
  function logAssessedChanges(
    runId: number,
    before: TrimAssessment | null,
    after: TrimAssessment,
    at: { time: string; position: number; afterSequence: number },
  ): void {
    const previous = before?.warnings ?? [];
    for (const warning of after.warnings) {
      if (!previous.some((w) => w.id === warning.id)) {
        logChange(runId, { id: warning.id, change: 'raised', position: at.position, seen: warning.seen }, at, 'assessment');
      }
    }
    for (const warning of previous) {
      if (!after.warnings.some((w) => w.id === warning.id)) {
        const seen = `no longer seen (was: ${warning.seen})`;
        logChange(runId, { id: warning.id, change: 'cleared', position: at.position, seen }, at, 'assessment');
      }
    }
  }

  function logChange(
    runId: number,
    change: ReportedWarningChange,
    at: { time: string; afterSequence: number },
    source: WarningLogEntry['source'],
  ): void {
    insertSealed('warning_changes', {
      run_id: runId,
      warning_id: change.id,
      change: change.change,
      at: at.time,
      position: change.position,
      after_sequence: at.afterSequence,
      seen: change.seen,
      source,
    });
  }

  /** The run's step results in the order recorded, each with its measurements, checked as they are read. */
  /**
   * Each row is sealed, but a row can be hidden whole (a damaged index): a step's verdict must be
   * what its measurements, each judged again against its own stored limits, say. A check step
   * passes exactly when it has measurements and all pass, so a check with none, a PASS whose failing
   * measurement went missing, or a FAIL with none failing, is a record read incomplete. A trim's FAIL can have other
   * reasons than its THD, so there only a PASS is checked.
   */
  function whyVerdictNotBorneOut(result: StepResult): string | null {
    const judged = result.measurements.map((m) => judgeLimit(m.value, { low: m.low ?? undefined, high: m.high ?? undefined }));
    if (result.measurements.some((m, i) => m.verdict !== judged[i])) return 'a measurement’s stored verdict is not its value against its limits';
    const allPass = judged.length > 0 && judged.every((v) => v === 'pass');
    if (result.kind === 'notice') return result.verdict === 'pass' && judged.length === 0 ? null : 'a notice has a verdict other than acknowledged, or measurements';
    if (result.kind === 'trim') return result.verdict === 'pass' && !allPass ? 'a passed trim whose THD does not pass' : null;
    // A check always stores what it measured; a FAIL stands on at least one failing measurement.
    if (judged.length === 0) return 'a check with no measurements';
    return (result.verdict === 'pass') === allPass ? null : `a ${result.verdict} check whose measurements read ${judged.join(', ')}`;
  }

  function stepResults(runId: number): StepResult[] {
    const byResult = new Map<number, Measurement[]>();
    for (const row of statements.measurements.all(runId)) {
      const what = `measurement ${row.quantity} of run ${runId}`;
      checkSealed('measurements', row, what);
      const parsed = measurementSchema.safeParse({ quantity: row.quantity, value: row.value, unit: row.unit, low: row.low, high: row.high, verdict: row.verdict, note: row.note });
      if (!parsed.success) throw new UnreadableRecord(what, `does not validate at ${parsed.error.issues[0]?.path.join('.') || '(root)'}`);
      byResult.set(row.step_result_id, [...(byResult.get(row.step_result_id) ?? []), parsed.data]);
    }
    return statements.stepResults.all(runId).map((row) => {
      const what = `result of step ${row.step_id} of run ${runId}`;
      checkSealed('step_results', row, what);
      const parsed = stepResultSchema.safeParse({
        id: row.id,
        stepId: row.step_id,
        kind: row.kind,
        attempt: row.attempt,
        recordedAt: row.recorded_at,
        verdict: row.verdict,
        reasons: fromStoredJson(row.reasons_json, reasonsSchema, what),
        measurements: byResult.get(row.id) ?? [],
        stimulus: row.stimulus_json === null ? null : fromStoredJson(row.stimulus_json, stepStimulusSchema, what),
        // A ringing step keeps its scope record where a check keeps its readings.
        scopeRecord: row.kind === 'ringing' && row.readings_json !== null ? fromStoredJson(row.readings_json, scopeRecordSchema, what) : null,
        // A response step stores its analysed curve in place of readings, for its plot.
        ...(row.kind === 'response' && row.readings_json !== null ? { curve: fromStoredJson(row.readings_json, responseCurveSchema, what) } : {}),
      });
      if (!parsed.success) throw new UnreadableRecord(what, `does not validate at ${parsed.error.issues[0]?.path.join('.') || '(root)'}`);
      const whyNot = whyVerdictNotBorneOut(parsed.data);
      if (whyNot) throw new UnreadableRecord(what, whyNot);
      return parsed.data;
    });
  }

  /**
   * The step a call records, refused unless it may be recorded now. Steps go in order: a step is
   * recorded when every earlier one has a result (judgeUnit's next step), or again when it already
   * has one (a repeat; the latest counts). After a failed step that stops the run only that step
   * may be repeated. A run started before steps were recorded (an older Trimbench) has no results,
   * so it walks from step 1 like a new one.
   */
  function stepToRecord(row: RunRow, stepId: string, wanted: 'notice' | 'trim' | 'check' | 'ringing'): ProcedureStep {
    const file = runProcedureFile(row);
    const step = file.steps.find((s) => s.id === stepId);
    if (!step) throw new ExpectedFailure(`Step “${stepId}” is not in procedure ${file.code} revision ${file.revision}, which run ${row.id} follows.`);
    if (wanted === 'check' ? !isCheckStep(step) : step.kind !== wanted) {
      throw new ExpectedFailure(`Step “${stepId}” is a ${step.kind} step, not a ${wanted} step: nothing was recorded.`);
    }
    const results = stepResults(row.id);
    const judgement = judgeUnit(file, results);
    // A failure at a "stop" step ends the run there: measuring it again until it passes would hide
    // the failure. The unit is tested again in a retest, which names this run and why.
    if (judgement.stoppedAt !== null) {
      throw new ExpectedFailure(`Step “${judgement.stoppedAt}” failed, and a failure there ends the run: finish it as FAIL. To test the unit again, start a retest with the reason.`);
    }
    if (judgement.nextStepId !== stepId && !results.some((r) => r.stepId === stepId)) {
      throw new ExpectedFailure(`Step “${stepId}” comes later: steps are recorded in order, and step “${judgement.nextStepId}” has no result yet.`);
    }
    return step;
  }

  /** The trim step's one measurement: THD at the final point against the trim's limit. */
  const trimThdMeasurement = (finalThdDb: number | null, trim: Procedure['trim']) =>
    measurement('thdDb', finalThdDb, { high: trim.limitThdDb, unit: 'dB' }, 'THD at the final trim point, from its harmonics');

  /**
   * The trim may be recorded or changed only at its place in the walk: after the steps before it
   * (the safety notice first), and not once a later step has been measured. The checks after the
   * trim describe the unit at the setting it was left at; a trimmer moved after them would leave a
   * PASS standing on checks of a setting the unit no longer has.
   */
  function refuseUnlessTrimMayChange(row: RunRow, what: string, { afterChecks }: { afterChecks: 'refuse' | 'allow' }): void {
    const file = runProcedureFile(row);
    const index = file.steps.findIndex((s) => s.kind === 'trim');
    const step = file.steps[index];
    if (!step) throw new ExpectedFailure(`Procedure ${file.code} revision ${file.revision} has no trim step: ${what} cannot be recorded.`);
    stepToRecord(row, step.id, 'trim');
    if (afterChecks === 'allow') return;
    const measured = laterStepResult(file, stepResults(row.id), step.id);
    if (measured) {
      throw new ExpectedFailure(
        `Step “${measured.stepId}” after the trim has been measured at the trimmer's setting, so ${what} can no longer change this run. Finish it, then start a retest with the reason to trim the unit again.`,
      );
    }
  }

  /**
   * A check step judged in main and stored, or refused with the reason and nothing stored: the run
   * open and writable, its calibration holding for the setup, the step the walk's next (or a
   * repeat), then `judge` on the run's calibration and setup inside one write transaction.
   */
  function recordCheck(
    request: { runId: number; stepId: string; setup?: AudioSetup | null },
    judge: (step: CheckStep, used: ReturnType<typeof calibrationUsed>, setup: AudioSetup | null) => { outcome: CheckOutcome; stimulus: StimulusSetting; readings: unknown },
  ): RunDetail {
    refuseUnlessWritable();
    const row = openRunRow(request.runId, (id) => `Run ${id} is finished; its steps can no longer be recorded.`);
    const lapsed = calibrationNotHolding(row, request.setup, true);
    if (lapsed) throw new ExpectedFailure(`This step was not recorded. ${lapsed} Otherwise finish the run as FAIL, calibrate the station, then retest the unit.`);
    return db.transaction(() => {
      const step = stepToRecord(row, request.stepId, 'check');
      if (!isCheckStep(step)) throw new ExpectedFailure(`Step “${step.id}” is not a check step.`);
      const { outcome, stimulus, readings } = judge(step, calibrationUsed(row), request.setup ?? null);
      if (!outcome.ok) throw new ExpectedFailure(`Step “${step.id}” was not recorded. ${outcome.refusal}`);
      const { verdict, reasons, measurements } = outcome.result;
      storeStepResult(row.id, step, { verdict, reasons, measurements, stimulus, readings });
      return runDetail(row.id);
    }).immediate();
  }

  /** Stores a step's result with its measurements; called inside the caller's write transaction. */
  function storeStepResult(
    runId: number,
    step: ProcedureStep,
    result: { verdict: 'pass' | 'fail'; reasons: readonly string[]; measurements: readonly Measurement[]; stimulus: StimulusSetting | null; readings: unknown },
  ): void {
    // Checked before anything is written: a value SQLite would store as NULL (NaN, ±∞) must not
    // leave the run unreadable from then on.
    const checked = measurementsSchema.safeParse(result.measurements);
    if (!checked.success) {
      const quantity = result.measurements[Number(checked.error.issues[0]?.path[0] ?? 0)]?.quantity;
      throw new ExpectedFailure(`Step “${step.id}” gives no finite value for ${quantity ? quantityLabel(quantity) : 'a quantity'}: nothing was stored. Take the reading again.`);
    }
    const resultId = insertSealed('step_results', {
      run_id: runId,
      step_id: step.id,
      kind: step.kind,
      attempt: (statements.attemptsOfStep.get(runId, step.id)?.count ?? 0) + 1,
      recorded_at: timestamp(),
      verdict: result.verdict,
      reasons_json: toStoredJson(result.reasons),
      stimulus_json: result.stimulus === null ? null : toStoredJson(result.stimulus),
      readings_json: result.readings === null ? null : toStoredJson(result.readings),
    });
    for (const m of checked.data) {
      insertSealed('measurements', { step_result_id: resultId, run_id: runId, quantity: m.quantity, value: m.value, unit: m.unit, low: m.low, high: m.high, verdict: m.verdict, note: m.note });
    }
  }

  /**
   * The trim judged from the stored points as Finish has always judged it: on THD recomputed from
   * the stored harmonics (the page's own thdDb figure is never the verdict), and the final THD.
   */
  function judgeTrimNow(row: RunRow, trim: Procedure['trim'], detail: RunDetail): { judged: TrimJudgement; finalThdDb: number | null } {
    const watched = new Set(statements.trimPoints.all(row.id).filter((p) => p.live_json !== null).map((p) => p.id));
    const judgedPoints = detail.trimPoints.map((p) => ({
      ...p,
      reading: { ...p.reading, thdDb: thdDbFromHarmonics(p.reading.harmonics) },
      liveWatched: watched.has(p.id),
    }));
    const judged = judgeTrimRun({ trimPoints: judgedPoints, assessment: detail.assessment, openLiveWarnings: openLiveWarnings(detail.warningLog) }, trim);
    return { judged, finalThdDb: judgedPoints.at(-1)?.reading.thdDb ?? null };
  }

  /** The calibration the run was started under, as the run names it; null when none. */
  function calibrationUsed(row: RunRow) {
    if (row.calibration_id === null || !calibrations) return null;
    return calibrations.used(
      { calibrationId: row.calibration_id, chainCheckId: row.chain_check_id, expiresAt: row.calibration_expires_at ?? '' },
      runProcedure(row).trim.stimulusHz,
    );
  }

  function runRow(runId: number): RunRow {
    const row = statements.runById.get(runId);
    if (!row) throw new ExpectedFailure(`There is no run with id ${runId}.`);
    return row;
  }

  /**
   * Whether two typed operator names are the same person's: the contract already trims them; case,
   * runs of spaces and Unicode composition (NFC: "é" typed as one or two code points) are ways of
   * typing a name, not different names.
   */
  function sameOperator(a: string, b: string): boolean {
    const key = (name: string) => name.normalize('NFC').replace(/\s+/g, ' ').toLowerCase();
    return key(a) === key(b);
  }

  /**
   * The run this station has open: the one openRun last gave the page (resumed or started). A call
   * that changes a run acts only on it, so a stale page or a guessed id cannot touch another unit's.
   */
  let stationOpenRunId: number | null = null;

  /** The run to change, refused unless it is unfinished and the one the station has open. */
  function openRunRow(runId: number, finishedMessage: (id: number) => string): RunRow {
    const row = runRow(runId);
    if (row.finished_at) throw new ExpectedFailure(finishedMessage(row.id));
    if (row.id !== stationOpenRunId) {
      throw new ExpectedFailure(`Run ${row.id} is not the run open at this station: open the unit (serial and operator) again, then retry.`);
    }
    return row;
  }

  /**
   * Why the run's calibration no longer holds for what is being recorded, or null: it expired (for a
   * procedure that requires one), or the audio setup in use is not the one it was made with. A
   * reading needs the setup (`setupNeeded`): without it main cannot tell.
   */
  function calibrationNotHolding(row: RunRow, setup: AudioSetup | null | undefined, setupNeeded: boolean): string | null {
    if (runProcedure(row).requiresCalibration && row.calibration_expires_at !== null && now().getTime() >= Date.parse(row.calibration_expires_at)) {
      return `The station's calibration this run was started under expired on ${row.calibration_expires_at.slice(0, 10)}.`;
    }
    if (row.calibration_id === null || !calibrations) return null;
    if (setup == null) return setupNeeded ? 'The audio setup in use was not given, so the run\'s calibration cannot be checked against it. Start capture, then try again.' : null;
    const changes = setupChanges(calibrations.setupOf(row.calibration_id), setup);
    return changes.length > 0 ? `The run's calibration does not hold for the setup in use: ${changes.join(', ')} changed since the run started. Go back to that setup.` : null;
  }

  /** While nothing can be written, opening a unit shows its latest run to read, and starts none. */
  function latestRunToRead(serial: string, refusal: string): RunDetail {
    const unit = statements.unitBySerial.get(serial);
    const latest = unit ? statements.latestRunOfUnit.get(unit.id) : undefined;
    if (!latest) throw new ExpectedFailure(`${refusal} No record of serial ${serial} could be read.`);
    return runDetail(latest.id);
  }

  /**
   * Reads a run whole or not at all: a record in it that fails its checks makes the run unreadable,
   * said in words with the serial, while every other run still opens. The detail goes to the log.
   */
  function runDetail(runId: number): RunDetail {
    let row: RunRow | undefined;
    try {
      row = runRow(runId);
      return readRunDetail(row);
    } catch (caught) {
      // SQLite's own answer that a page of this run is damaged makes the run unreadable, as a
      // record that fails its checks does; the station stops writing to the file.
      const error = isDatabaseDamaged(caught) ? new UnreadableRecord(`run ${runId}`, String(caught), { inFile: true }) : caught;
      if (!(error instanceof UnreadableRecord)) throw error;
      onUnreadable(error);
      throw new ExpectedFailure(
        `Run ${runId}${row ? ` (serial ${row.serial})` : ''} cannot be read: ${error.message} Other units' records are not affected. ` +
          `Record nothing more on this unit and tell the station's maintainer; the details are in the log file.`,
      );
    }
  }

  /**
   * Each row is sealed, but a damaged index can hide whole rows and leave every one read intact: a
   * run missing its latest point or the assessment after it would read as an older, whole-looking
   * run. Points are numbered 1, 2, 3… and, since assessments were kept, each is stored with the
   * assessment made after it, so a gap in either is a missing record. The last point and its
   * assessment can be hidden together; a finished run's own row (sealed) holds the THD of its final
   * point, so there the last point read must be that one.
   */
  function checkComplete(row: RunRow, points: readonly TrimPoint[], assessments: readonly { afterSequence: number }[]): void {
    const runId = row.id;
    points.forEach((point, i) => {
      if (point.sequence !== i + 1) throw new UnreadableRecord(`trim point ${i + 1} of run ${runId}`, `points read: ${points.map((p) => p.sequence).join(', ')}`);
    });
    if (row.finished_at !== null && row.final_thd_db !== null) {
      const last = points.at(-1);
      const lastThdDb = last ? thdDbFromHarmonics(last.reading.harmonics) : null;
      if (lastThdDb === null || !(Math.abs(lastThdDb - row.final_thd_db) < 1e-6)) {
        throw new UnreadableRecord(`final trim point of run ${runId}`, `the run's final THD is ${row.final_thd_db} dB; the last point read (${points.length}) has ${lastThdDb} dB`);
      }
    }
    const latestAssessed = assessments.reduce((latest, a) => Math.max(latest, a.afterSequence), 0);
    if (assessments.length > 0 && points.length > 0 && latestAssessed < points.length) {
      throw new UnreadableRecord(`assessment after trim point ${points.length} of run ${runId}`, `latest assessment read is after point ${latestAssessed}`);
    }
  }

  function readRunDetail(row: RunRow): RunDetail {
    const runId = row.id;
    const assessments = assessmentsOf(runId);
    const procedureFile = runProcedureFile(row);
    const results = stepResults(runId);
    const warm = statements.latestWarmCheck.get(runId);
    if (warm) checkSealed('warm_checks', warm, `warm re-check of run ${runId}`);
    const points = trimPoints(runId);
    checkComplete(row, points, assessments);
    return {
      run: toRun(row),
      trimPoints: points,
      assessment: assessments.at(-1)?.assessment ?? null,
      warningsRaised: warningsRaised(assessments),
      warningLog: warningLog(runId),
      warmCheck: warm ? fromStoredJson(warm.result_json, warmCheckSchema, `warm re-check of run ${runId}`) : null,
      earlierRuns: statements.earlierRuns.get(row.unit_id, runId)?.count ?? 0,
      procedure: runProcedure(row),
      procedureFile,
      stepResults: results,
      judgement: judgeUnit(procedureFile, results),
      calibration: calibrationUsed(row),
    };
  }

  /**
   * The calibration a new run is measured with: the station's latest, when it holds for the setup
   * in use. A procedure that requires one refuses to start without it, saying why and what to do.
   */
  function calibrationForNewRun(procedure: Procedure, serial: string, setup: AudioSetup | null) {
    if (!calibrations || !settings) return null;
    const { calibration, chainCheck, status } = calibrations.current(settings(), setup);
    if (procedure.requiresCalibration && (status.state !== 'valid' || setup === null)) {
      const why = setup === null && status.state === 'valid' ? 'Start capture first, so the station can check its setup against the calibration.' : status.message;
      throw new ExpectedFailure(`${procedure.code} requires a calibrated station, so ${serial} cannot be started. ${why}`);
    }
    if (status.state !== 'valid' || !calibration) return null;
    return { calibrationId: calibration.id, chainCheckId: chainCheck?.id ?? null, expiresAt: status.expiresAt! };
  }

  return {
    /**
     * Stores a built-in procedure revision once; returns its id. A revision, once stored, never
     * changes: one already stored with other content is refused, since running either would be a
     * guess at which one the line meant.
     */
    ensureProcedure(definition: Procedure): number {
      refuseUnlessWritable();
      const parsed = procedureSchema.parse(definition);
      const existing = statements.procedureByKey.get(parsed.code, parsed.revision);
      if (!existing) return insertSealed('procedures', { code: parsed.code, revision: parsed.revision, definition_json: toStoredJson(parsed) });
      if (!storedAs(existing.id, parsed)) {
        throw new ExpectedFailure(
          `The built-in procedure ${parsed.code} revision ${parsed.revision} differs from the one stored under that revision in this station's records, ` +
            `so neither is used. Install the Trimbench release the records were made with, or report it to the station's maintainer.`,
        );
      }
      return existing.id;
    },

    /**
     * Stores a procedure file the line wrote, checked whole first. A revision never changes: the
     * same file again changes nothing; a changed file under a stored revision is refused (give it a
     * new revision); a new revision becomes the one new runs use.
     */
    importProcedure(text: string, fileName: string): { outcome: 'stored' | 'unchanged'; id: number; code: string; revision: string; summary: string } {
      refuseUnlessWritable();
      const checked = checkProcedureFile(text);
      if (!checked.ok) {
        const shown = checked.problems.slice(0, 8).map((p) => `• ${p.path}: ${p.message}`);
        const more = checked.problems.length > shown.length ? `\n…and ${checked.problems.length - shown.length} more.` : '';
        throw new ExpectedFailure(`${fileName} was not imported; correct it and import it again:\n${shown.join('\n')}${more}`);
      }
      const file = checked.procedure;
      if (!trimView(file)) {
        throw new ExpectedFailure(`${fileName} was not imported: this Trimbench runs procedures that have a trim step, and it has none.`);
      }
      return db.transaction(() => {
        const existing = statements.procedureByKey.get(file.code, file.revision);
        if (existing) {
          if (storedAs(existing.id, file)) {
            return { outcome: 'unchanged' as const, id: existing.id, code: file.code, revision: file.revision, summary: checked.summary };
          }
          throw new ExpectedFailure(
            `${fileName} was not imported: ${file.code} revision ${file.revision} is already stored with other content, and a stored revision never changes. ` +
              `Give the changed procedure a new revision in the file, then import it again.`,
          );
        }
        // New runs use the newest revision stored, so an older file imported by mistake must not
        // take its place: revisions go forward (compared as text with numbers in order: B < C, 2 < 10).
        const newest = statements.newestRevisionOfCode.get(file.code);
        if (newest && compareRevisions(file.revision, newest.revision) <= 0) {
          throw new ExpectedFailure(
            `${fileName} was not imported: revision ${file.revision} of ${file.code} is not after revision ${newest.revision}, which new runs use now. ` +
              `Give the file a later revision.`,
          );
        }
        const id = insertSealed('procedures', { code: file.code, revision: file.revision, definition_json: toStoredJson(file) });
        return { outcome: 'stored' as const, id, code: file.code, revision: file.revision, summary: checked.summary };
      }).immediate();
    },

    /**
     * Every stored revision of every procedure, whole (a schema-1 one as its upgrade), by code and
     * then as stored, with how many runs name it; an unreadable one is left out (and logged).
     */
    listProcedureRevisions(): import('../../shared/ipc/contract.ts').ProcedureRevision[] {
      const rows = db
        .prepare<[], ProcedureRow & { runs: number; current: number }>(
          `SELECT procedures.*, (SELECT COUNT(*) FROM runs WHERE runs.procedure_id = procedures.id) AS runs,
             procedures.id = (SELECT MAX(id) FROM procedures AS p WHERE p.code = procedures.code) AS current
           FROM procedures ORDER BY code, id`,
        )
        .all();
      return rows.flatMap((row) => {
        const what = `procedure ${row.code} revision ${row.revision}`;
        try {
          checkSealed('procedures', row, what);
          const stored = fromStoredJson(row.definition_json, storedProcedureDefinition, what);
          const file = stored.schemaVersion === 1 ? upgradeProcedure(stored) : stored;
          return [{ id: row.id, code: row.code, revision: row.revision, modelCode: file.model.code, current: row.current === 1, file, runs: row.runs }];
        } catch (error) {
          if (!(error instanceof UnreadableRecord)) throw error;
          onUnreadable(error);
          return [];
        }
      });
    },

    /** The newest revision of each procedure; an unreadable one is left out (and logged), never guessed at. */
    listProcedures(): StoredProcedure[] {
      const readable: StoredProcedure[] = [];
      let rows: ProcedureRow[];
      try {
        rows = statements.procedures.all();
      } catch (error) {
        if (!isDatabaseDamaged(error)) throw error;
        onUnreadable(new UnreadableRecord('list of procedures', String(error), { inFile: true }));
        return [];
      }
      for (const row of rows) {
        try {
          readable.push({ id: row.id, definition: readProcedure(row) });
        } catch (error) {
          if (!(error instanceof UnreadableRecord)) throw error;
          onUnreadable(error);
        }
      }
      return readable;
    },

    /** Resumes the unit's unfinished run of this procedure, or starts a new one (a retest after a finished run). */
    openRun(request: { serial: string; procedureId: number; operator: string; setup?: AudioSetup | null; retestReason?: string; lot?: string }): RunDetail {
      // Opening a unit leaves whatever the page had open; until this call succeeds, no run is open
      // here, so a refused open (another operator's run) leaves nothing for later calls to act on.
      stationOpenRunId = null;
      const procedure = procedureById(request.procedureId);
      const serialCheck = checkSerial(request.serial, procedure);
      if (!serialCheck.ok) throw new ExpectedFailure(serialCheck.message);
      const serial = serialCheck.serial;
      const refusal = whyNotWritable();
      if (refusal !== null) return latestRunToRead(serial, refusal);
      const runId = db.transaction(() => {
        let unit = statements.unitBySerial.get(serial);
        if (!unit) {
          const id = insertSealed('units', { serial, model_code: procedure.model.code, created_at: timestamp() });
          unit = { id, model_code: procedure.model.code };
        } else if (unit.model_code !== procedure.model.code) {
          throw new ExpectedFailure(
            `Serial ${serial} is recorded as a ${unit.model_code}, not a ${procedure.model.code}. Check the unit and the procedure.`,
          );
        }
        const open = statements.openRunOfUnit.get(unit.id, request.procedureId);
        if (open) {
          // A run names one operator and its points carry no name of their own, so a run resumed
          // by someone else would credit their points to the first person. Refusing is the
          // simplest rule that keeps every point credited to whoever recorded it: a handover would
          // need a per-point operator and a logged change, and the open run can always be ended
          // by its operator (finished, or finished as a failure) so the next one starts a retest.
          if (sameOperator(open.operator, request.operator)) return open.id;
          throw new ExpectedFailure(
            `Serial ${serial} has an unfinished run (run ${open.id}) under operator ${open.operator}. Only ${open.operator} ` +
              `can continue it: ask them to finish it (or finish it as a failure), then open the unit under your name for a retest.`,
          );
        }
        // One unfinished run per unit, whatever its procedure (the database holds to it as well).
        const other = statements.anyOpenRunOfUnit.get(unit.id);
        if (other) {
          throw new ExpectedFailure(
            `Serial ${serial} has an unfinished run (run ${other.id}) under procedure ${other.code}. Finish that run first, then open the unit under this procedure.`,
          );
        }
        // An unfinished run keeps its revision; a new one must not start on a replaced revision,
        // which may lack checks the newer one has (revision A of the demo has no level window).
        const newest = statements.newestRevisionOf.get(request.procedureId);
        if (newest && newest.id !== request.procedureId) {
          throw new ExpectedFailure(
            `${procedure.code} revision ${procedure.revision} has been replaced by revision ${newest.revision}: ` +
              `new runs use revision ${newest.revision}. Choose it to start testing ${serial}.`,
          );
        }
        // A unit tested before under this procedure gets a retest: linked to the run it repeats, with the reason.
        const earlier = statements.latestFinishedRunOf.get(unit.id, request.procedureId);
        if (earlier) checkSealed('runs', earlier, `run ${earlier.id}`);
        if (earlier && !request.retestReason) {
          throw new RetestNeedsReason(
            `${serial} was tested before: run ${earlier.id}, ${earlier.verdict === 'pass' ? 'PASS' : 'FAIL'} on ${earlier.finished_at!.slice(0, 10)} ` +
              `by ${earlier.operator}. Give the reason for the retest to start run ${earlier.id}'s repeat.`,
          );
        }
        const calibration = calibrationForNewRun(procedure, serial, request.setup ?? null);
        const name = stationName();
        const stationId = statements.stationByName.get(name)?.id ?? insertSealed('stations', { name, first_seen_at: timestamp() });
        return insertSealed('runs', {
          unit_id: unit.id,
          procedure_id: request.procedureId,
          operator: request.operator,
          station: name,
          started_at: timestamp(),
          finished_at: null,
          verdict: null,
          verdict_reason: null,
          verdict_reasons_json: null,
          final_thd_db: null,
          limit_thd_db: procedure.trim.limitThdDb,
          sheet_pdf_path: null,
          calibration_id: calibration?.calibrationId ?? null,
          chain_check_id: calibration?.chainCheckId ?? null,
          calibration_expires_at: calibration?.expiresAt ?? null,
          retest_of: earlier ? earlier.id : null,
          retest_reason: earlier ? request.retestReason! : null,
          lot: request.lot ?? null,
          station_id: stationId,
        });
      }).immediate();
      const detail = runDetail(runId);
      stationOpenRunId = runId;
      return detail;
    },

    getRun: runDetail,

    /**
     * A unit's history by serial, creating nothing: every run with its verdict, who, when, the final
     * trimmer position and the sheet. A run that cannot be read is listed as such; the others still are.
     */
    lookUpUnit(serial: string): UnitHistory | null {
      const unit = statements.unitBySerial.get(serial);
      if (!unit) return null;
      const runs = statements.runsOfUnit.all(unit.id).map(({ id }): UnitHistory['runs'][number] => {
        try {
          const detail = runDetail(id);
          return {
            run: detail.run,
            finalPosition: detail.trimPoints.at(-1)?.position ?? null,
            points: detail.trimPoints.length,
            unreadable: null,
          };
        } catch (error) {
          if (!(error instanceof ExpectedFailure)) throw error;
          return { run: null, runId: id, finalPosition: null, points: 0, unreadable: error.message };
        }
      });
      return { serial, modelCode: unit.model_code, runs };
    },

    whyNotWritable,

    /**
     * Writes the point, the assistant's assessment after it and the warnings that changed, in one
     * transaction. Main judges what it can check itself: the stimulus as the page reports it against
     * the procedure, the reading against the stimulus, and settling.
     */
    recordTrimPoint(request: {
      runId: number;
      position: number;
      reading: Reading;
      live: LiveSeries | null;
      stimulus: StimulusSetting;
      unsettled?: 'refuse' | 'record-marked';
      /** The audio setup in use: checked against the run's calibration when given. */
      setup?: AudioSetup | null;
    }): RecordedPoint {
      refuseUnlessWritable();
      const row = openRunRow(request.runId, (id) => `Run ${id} is finished; start a retest to record more trim points.`);
      refuseUnlessTrimMayChange(row, 'a trim point', { afterChecks: 'refuse' });
      const { trim } = runProcedure(row);
      const { position, reading, stimulus } = request;
      if (position < trim.positionMin || position > trim.positionMax) {
        throw new ExpectedFailure(
          `Trimmer position ${position} is outside ${trim.positionMin}–${trim.positionMax} ${trim.positionUnit}.`,
        );
      }
      const lapsed = calibrationNotHolding(row, request.setup, true);
      if (lapsed) throw new ExpectedFailure(`This point was not recorded. ${lapsed} Otherwise finish the run as FAIL, calibrate the station, then retest the unit.`);
      const refusal = whyNotRecordable(reading, stimulus, trim, request.unsettled ?? 'refuse');
      if (refusal) throw new ExpectedFailure(`This reading cannot be recorded. ${refusal}`);
      // A second point where the last one is adds nothing but a repeated Enter's copy, and would let
      // a later reading at an unchanged trimmer stand in for the one the fit already has.
      const last = trimPoints(row.id).at(-1);
      if (last && last.position === position) {
        throw new ExpectedFailure(`Point ${last.sequence} is already at ${position} ${trim.positionUnit}: move the trimmer before recording another.`);
      }
      return db.transaction(() => {
        const before = assessmentsOf(row.id).at(-1)?.assessment ?? null;
        const sequence = statements.nextSequence.get(row.id)?.next ?? 1;
        const recordedAt = timestamp();
        const id = insertSealed('trim_points', {
          run_id: row.id,
          sequence,
          position,
          recorded_at: recordedAt,
          settled: reading.settled ? 1 : 0,
          in_fit: reading.settled ? 1 : 0, // an unsettled point joins the fit only when the technician confirms it
          stimulus_hz: stimulus.frequencyHz,
          stimulus_level_dbfs: stimulus.levelDbfs,
          thd_db: reading.thdDb,
          reading_json: toStoredJson(reading),
          live_json: request.live === null ? null : toStoredJson(request.live),
        });
        const assessment = assess(row.id, trim);
        insertSealed('trim_assessments', { run_id: row.id, after_sequence: sequence, assessed_at: recordedAt, assessment_json: toStoredJson(assessment) });
        logAssessedChanges(row.id, before, assessment, { time: recordedAt, position, afterSequence: sequence });
        const point = trimPoints(row.id).find((p) => p.id === Number(id))!;
        return { point, assessment, warningLog: warningLog(row.id), detail: runDetail(row.id) };
      }).immediate();
    },

    /** The technician confirms an unsettled point: it joins the fit and the verdict, re-assessed and logged. */
    includeUnsettledPoint(request: { runId: number; pointId: number }): RecordedPoint {
      refuseUnlessWritable();
      const row = openRunRow(request.runId, (id) => `Run ${id} is finished; its points can no longer change.`);
      refuseUnlessTrimMayChange(row, 'the fit', { afterChecks: 'refuse' });
      const { trim } = runProcedure(row);
      const points = trimPoints(row.id);
      const point = points.find((p) => p.id === request.pointId);
      if (!point) throw new ExpectedFailure(`Run ${row.id} has no trim point with id ${request.pointId}.`);
      if (point.inFit) throw new ExpectedFailure(`Trim point ${point.sequence} is already in the fit.`);
      const latest = points.at(-1)!;
      return db.transaction(() => {
        const before = assessmentsOf(row.id).at(-1)?.assessment ?? null;
        const confirmedAt = timestamp();
        const assessment = assess(row.id, trim, point.id);
        insertSealed('point_confirmations', {
          run_id: row.id,
          point_id: point.id,
          after_sequence: latest.sequence,
          confirmed_at: confirmedAt,
          assessment_json: toStoredJson(assessment),
        });
        logAssessedChanges(row.id, before, assessment, { time: confirmedAt, position: latest.position, afterSequence: latest.sequence });
        return { point: trimPoints(row.id).find((p) => p.id === point.id)!, assessment, warningLog: warningLog(row.id), detail: runDetail(row.id) };
      }).immediate();
    },

    /** Warning changes the page's live watch saw between points, logged with main's time. */
    logWarningChanges(request: { runId: number; changes: readonly ReportedWarningChange[] }): { warningLog: WarningLogEntry[] } {
      refuseUnlessWritable();
      const row = openRunRow(request.runId, (id) => `Run ${id} is finished; its warning log is closed.`);
      const { trim } = runProcedure(row);
      for (const change of request.changes) {
        if (change.position < trim.positionMin || change.position > trim.positionMax) {
          throw new ExpectedFailure(
            `Warning position ${change.position} is outside ${trim.positionMin}–${trim.positionMax} ${trim.positionUnit}.`,
          );
        }
      }
      const afterSequence = (statements.nextSequence.get(row.id)?.next ?? 1) - 1;
      const at = timestamp();
      db.transaction(() => {
        for (const change of request.changes) logChange(row.id, change, { time: at, afterSequence }, 'live');
      }).immediate();
      return { warningLog: warningLog(row.id) };
    },

    /**
     * A warm re-check at the final setting: a second reading later, with both temperatures, compared
     * with the last trim point to show how well the unit's own thermal tracking held.
     */
    recordWarmCheck(request: {
      runId: number;
      coldTemperatureC: number;
      warmTemperatureC: number;
      reading: Reading;
      stimulus: StimulusSetting;
    }): WarmCheck {
      refuseUnlessWritable();
      const row = openRunRow(request.runId, (id) => `Run ${id} is finished; the warm re-check belongs before finishing.`);
      // The warm re-check reads the unit at the setting it was left at, so it may follow the checks.
      refuseUnlessTrimMayChange(row, 'the warm re-check', { afterChecks: 'allow' });
      const { trim } = runProcedure(row);
      const points = trimPoints(row.id);
      const last = points.at(-1);
      if (!last || points.length < 2) throw new ExpectedFailure('Record the trim (at least two points) before the warm re-check.');
      // Printed on the sheet beside the trim: held to what a trim point is held to.
      const refusal = whyNotRecordable(request.reading, request.stimulus, trim, 'refuse');
      if (refusal) throw new ExpectedFailure(`The warm reading cannot be recorded. ${refusal}`);
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
      const computed: WarmCheck = {
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
      // Checked before it is written: a non-finite drift would be stored as null and leave the run
      // unreadable from then on.
      const checked = warmCheckSchema.safeParse(computed);
      if (!checked.success) {
        throw new ExpectedFailure(
          `The warm re-check of H${order} gives no finite result (cold ${cold.levelDbc} dBc, warm ${warm.levelDbc} dBc): nothing was stored. Take the warm reading again.`,
        );
      }
      const result = checked.data;
      insertSealed('warm_checks', {
        run_id: row.id,
        recorded_at: result.recordedAt,
        position: last.position,
        cold_temperature_c: request.coldTemperatureC,
        warm_temperature_c: request.warmTemperatureC,
        reading_json: toStoredJson(request.reading),
        result_json: toStoredJson(result),
      });
      return result;
    },

    /** The technician acknowledged a notice step: its result is a pass, with nothing measured. */
    acknowledgeNotice(request: { runId: number; stepId: string }): RunDetail {
      refuseUnlessWritable();
      const row = openRunRow(request.runId, (id) => `Run ${id} is finished; its steps can no longer be recorded.`);
      return db.transaction(() => {
        const step = stepToRecord(row, request.stepId, 'notice');
        storeStepResult(row.id, step, { verdict: 'pass', reasons: [], measurements: [], stimulus: null, readings: null });
        return runDetail(row.id);
      }).immediate();
    },

    /**
     * The technician is done trimming: the trim is judged from the stored points as Finish judges it
     * (judgeTrimRun), and stored as the trim step's result with its final THD against the limit.
     */
    completeTrim(request: { runId: number; stepId: string }): RunDetail {
      refuseUnlessWritable();
      const row = openRunRow(request.runId, (id) => `Run ${id} is finished; its steps can no longer be recorded.`);
      const { trim } = runProcedure(row);
      return db.transaction(() => {
        const step = stepToRecord(row, request.stepId, 'trim');
        refuseUnlessTrimMayChange(row, 'the trim', { afterChecks: 'refuse' });
        const detail = runDetail(row.id);
        if (detail.trimPoints.length === 0) throw new ExpectedFailure('No trim point has been recorded: record the trim before completing it.');
        const { judged, finalThdDb } = judgeTrimNow(row, trim, detail);
        // The trim stops the run when it fails: stored as failed, it could not be trimmed further. So
        // "done" is taken only for a trim that passes; otherwise the reasons, and the choice is the
        // technician's: trim on, or finish the run as FAIL with these reasons.
        if (judged.verdict === 'fail') {
          throw new ExpectedFailure(`The trim does not pass yet: ${asSentences(judged.reasons)} Keep trimming, or finish the run as FAIL with these reasons.`);
        }
        const thd = trimThdMeasurement(finalThdDb, trim);
        storeStepResult(row.id, step, { verdict: judged.verdict, reasons: judged.reasons, measurements: [thd], stimulus: null, readings: null });
        return runDetail(row.id);
      }).immediate();
    },

    /**
     * A check step's settled reading(s), judged here (measureCheckStep) against the stored revision's
     * limits with the run's calibration. Readings that are not of the step's stimulus are refused
     * with the reason, and nothing is stored.
     */
    recordCheckStep(request: { runId: number; stepId: string; stimulus: StimulusSetting; readings: readonly { channel: number; reading: Reading }[]; setup?: AudioSetup | null }): RunDetail {
      return recordCheck(request, (step, used, setup) => {
        const levels = runLevels(used, setup);
        // Each of the unit's channels is read through its own capture input, with that input's figure
        // from the run's calibration (none for an input it did not measure: a two-channel step is then refused).
        const readings = request.readings.map(({ channel, reading }) => ({ channel, reading, inputDbuAtFullScale: inputDbuAtFullScaleFor(channel, used, setup) }));
        return { outcome: measureCheckStep(step, { stimulus: request.stimulus, levels, readings }), stimulus: request.stimulus, readings: request.readings };
      });
    },

    /**
     * A max-level step's whole sequence, judged here (judgeMaxLevel) against the stored revision's
     * limits with the run's calibration: every reading must be of the level the sequence plays at
     * its place, and the sequence must end where its rules end it. Otherwise nothing is stored.
     */
    recordMaxLevel(request: { runId: number; stepId: string; points: readonly MaxLevelPoint[]; setup?: AudioSetup | null }): RunDetail {
      return recordCheck(request, (step, used, setup) => {
        if (step.kind !== 'max-level') throw new ExpectedFailure(`Step “${step.id}” is a ${step.kind} step, not a max-level step: nothing was recorded.`);
        // The last level played stands for the step's stimulus; every level is in the readings.
        return { outcome: judgeMaxLevel(step, runLevels(used, setup), request.points), stimulus: request.points.at(-1)!.stimulus, readings: request.points };
      });
    },

    /**
     * A ringing step judged from the scope file main read (`text`, named `fileName`): read, analysed
     * and judged here against the stored revision's limits (judgeScopeRecord). A file that cannot
     * be read or judged, or a record of another square wave, is refused and nothing is stored.
     */
    recordRingingStep(request: { runId: number; stepId: string; text: string; fileName: string }): RunDetail {
      refuseUnlessWritable();
      const row = openRunRow(request.runId, (id) => `Run ${id} is finished; its steps can no longer be recorded.`);
      return db.transaction(() => {
        const step = stepToRecord(row, request.stepId, 'ringing');
        if (step.kind !== 'ringing') throw new ExpectedFailure(`Step “${step.id}” is not a ringing step.`);
        const outcome = judgeScopeRecord(step, request.text, request.fileName);
        if (!outcome.ok) throw new ExpectedFailure(`Step “${step.id}” was not recorded. ${outcome.refusal}`);
        // Checked before it is written, as it is read back: a record the contract refuses would leave
        // the run unreadable from then on.
        const record = scopeRecordSchema.safeParse(outcome.record);
        const measurements = z.array(measurementSchema).safeParse(outcome.measurements);
        if (!record.success || !measurements.success) {
          const where = record.success ? 'its figures' : record.error.issues.map((issue) => issue.path.join('.') || 'the record').join(', ');
          throw new ExpectedFailure(`Step “${step.id}” was not recorded: ${outcome.record.fileName} gives a record that cannot be stored (${where}). Export the record again as CSV and attach it.`);
        }
        storeStepResult(row.id, step, { verdict: outcome.verdict, reasons: outcome.reasons, measurements: measurements.data, stimulus: null, readings: record.data });
        return runDetail(row.id);
      }).immediate();
    },

    /**
     * A response step's capture of its sweep, analysed here with the sweep of the stored revision's
     * step at the capture's rate (the page says only the rate and gives the samples): refused when it
     * is not the unit's answer to that sweep (another sweep, another rate, clipped, far too quiet).
     * The response is corrected by the chain response of the run's chain check where it has one that
     * covers the band; without one it is judged as measured and says so, unless the procedure
     * requires calibration, which then asks for a chain check first (docs/procedures.md).
     */
    recordResponse(request: { runId: number; stepId: string; sampleRateHz: number; samples: readonly number[]; setup?: AudioSetup | null }): RunDetail {
      refuseUnlessWritable();
      const row = openRunRow(request.runId, (id) => `Run ${id} is finished; its steps can no longer be recorded.`);
      const lapsed = calibrationNotHolding(row, request.setup, true);
      if (lapsed) throw new ExpectedFailure(`This step was not recorded. ${lapsed} Otherwise finish the run as FAIL, calibrate the station, then retest the unit.`);
      const refuse = (why: string) => new ExpectedFailure(`Step “${request.stepId}” was not recorded. ${why}`);
      const setup = request.setup ?? null;
      if (setup && setup.sampleRateHz !== request.sampleRateHz) throw refuse(`The capture is said to run at ${request.sampleRateHz} Hz, and the audio setup runs at ${setup.sampleRateHz} Hz: run the sweep again.`);
      // Checked (and checked again below) before the analysis, which takes a moment outside the write transaction.
      const step = stepToRecord(row, request.stepId, 'check');
      if (step.kind !== 'response') throw new ExpectedFailure(`Step “${step.id}” is a ${step.kind} step, not a response step: nothing was recorded.`);
      const used = calibrationUsed(row);
      const plan = sweepSpecFor(step, request.sampleRateHz, runLevels(used, setup));
      if (!plan.ok) throw refuse(plan.refusal);
      const unusable = whyCaptureUnusable(request.samples, plan.spec, expectedCapturePeak(plan.spec, plan.levelDbu, inputDbuAtFullScaleFor(1, used, setup)));
      if (unusable) throw refuse(unusable);
      const analysed = analyzeSweepResponse(request.samples, plan.spec, { fromHz: step.fromHz, toHz: step.toHz, referenceHz: step.referenceHz });
      if (!analysed.ok) throw refuse(analysed.reason);

      const chain = calibrations?.chainResponseOf(row.chain_check_id) ?? null;
      const corrected = chain ? correctByChain(analysed.result, chain.response) : null;
      let response = analysed.result;
      let note: string;
      let uncorrectedReason: string | null = null;
      if (chain && corrected?.ok) {
        response = corrected.response;
        note = `corrected by the station's chain response (chain check of ${chain.checkedAt.slice(0, 10)})`;
      } else {
        uncorrectedReason = chain && corrected && !corrected.ok ? corrected.reason : row.calibration_id === null ? 'the run has no calibration' : 'the run\'s calibration has no chain check with a frequency response';
        if (runProcedureFile(row).requiresCalibration) {
          throw refuse(
            `This procedure requires a calibrated station, and the response cannot be corrected by the station's own: ${uncorrectedReason}. Run the chain check with its stepped sine over the step's band (Station settings), then retest the unit (a run keeps the calibration it was started under).`,
          );
        }
        note = `not corrected for the station's own response: ${uncorrectedReason}`;
      }
      const judged = judgeResponse(step, response, { corrected: uncorrectedReason === null, note });
      const curve = responseCurve(response, request.sampleRateHz, uncorrectedReason === null, uncorrectedReason);
      return db.transaction(() => {
        const again = stepToRecord(row, request.stepId, 'check');
        storeStepResult(row.id, again, { verdict: judged.verdict, reasons: judged.reasons, measurements: judged.measurements, stimulus: null, readings: curve });
        return runDetail(row.id);
      }).immediate();
    },

    /**
     * Judges the run (judgeTrimRun) and freezes it. A run that cannot pass is refused with the
     * reasons, unless the technician asks to finish it as FAIL with them.
     */
    finishRun(request: { runId: number; asFailure?: boolean }): RunDetail {
      const finished = runRow(request.runId);
      if (finished.finished_at) return runDetail(finished.id);
      refuseUnlessWritable();
      const row = openRunRow(request.runId, (id) => `Run ${id} is finished.`);
      const { trim } = runProcedure(row);
      const detail = runDetail(row.id);
      const { judged: trimNow, finalThdDb } = judgeTrimNow(row, trim, detail);
      // The unit's verdict is judgeUnit's over the stored step results: PASS only when every step passed.
      let reasons = [...detail.judgement.reasons];
      const trimStep = detail.procedureFile.steps.find((s) => s.kind === 'trim');
      const trimResult = detail.stepResults.filter((r) => r.stepId === trimStep?.id).at(-1);
      // A run finished as FAIL at its trim (main takes "trim done" only for a trim that passes) ends
      // there: the trim's failure is stored as the step's result, so the record says which step
      // failed and why, not that it was never run.
      const failedAtTrim =
        request.asFailure === true && trimStep !== undefined && !trimResult && detail.judgement.nextStepId === trimStep.id && detail.trimPoints.length > 0 && trimNow.verdict === 'fail';
      if (failedAtTrim) {
        reasons = judgeUnit(detail.procedureFile, [...detail.stepResults, { stepId: trimStep.id, verdict: 'fail', reasons: trimNow.reasons }]).reasons;
      } else if (trimStep && !trimResult && detail.judgement.stoppedAt === null) {
        // Said beside "the trim was not run": what the trim, as the points stand, still lacks.
        reasons.push(...trimNow.reasons);
      } else if (trimResult) {
        // Points recorded or confirmed after the trim was completed may change it: its stored result
        // must still be the trim as the points stand, or it speaks of a trimmer since moved.
        const storedThd = trimResult.measurements.find((m) => m.quantity === 'thdDb')?.value ?? null;
        if (trimResult.verdict !== trimNow.verdict || storedThd !== finalThdDb) {
          reasons.push(`The trim changed after step “${trimResult.stepId}” was completed (points recorded or confirmed since): complete the trim again, so its result is of the trimmer as left.`);
        }
      }
      // The setup is checked where each reading is recorded; at finish only the calibration's age.
      const lapsed = calibrationNotHolding(row, null, false);
      if (lapsed) reasons.push(lapsed);
      if (reasons.length > 0 && !request.asFailure) {
        throw new CannotPass(
          `This run cannot pass:\n${reasons.map((r) => `• ${r}`).join('\n')}\nPut that right and finish again, or finish the run as FAIL.`,
        );
      }
      if (reasons.length === 0 && request.asFailure) reasons.push('Finished as FAIL by the technician, although every step met its conditions for a pass.');
      const verdict = reasons.length === 0 ? 'pass' : 'fail';
      // The verdict commits only with a run record that validates whole; otherwise nothing is written.
      return db.transaction(() => {
        if (failedAtTrim) {
          const thd = trimThdMeasurement(finalThdDb, trim);
          storeStepResult(row.id, trimStep, { verdict: 'fail', reasons: trimNow.reasons, measurements: [thd], stimulus: null, readings: null });
        }
        const finish = {
          finished_at: timestamp(),
          verdict,
          verdict_reason: asSentences(reasons) || null,
          verdict_reasons_json: toStoredJson(reasons),
          final_thd_db: finalThdDb,
        };
        statements.finishRun.run({ ...finish, id: row.id, crc: sealRow('runs', valuesOf('runs', { ...row, ...finish })) });
        let stored;
        try {
          stored = runDetailSchema.safeParse(runDetail(row.id));
        } catch {
          stored = null;
        }
        if (!stored?.success) {
          const where = stored?.error.issues[0]?.path.join('.') || 'run';
          throw new ExpectedFailure(`Run ${row.id}'s stored record does not validate (${where}): it was not finished. Report it to the station's maintainer.`);
        }
        return stored.data;
      }).immediate();
    },

    setSheetPath(runId: number, path: string): void {
      refuseUnlessWritable();
      const row = runRow(runId);
      runProcedure(row); // a damaged run's record is not resealed as if whole
      statements.setSheetPath.run(path, sealRow('runs', valuesOf('runs', { ...row, sheet_pdf_path: path })), runId);
    },
  };
}
