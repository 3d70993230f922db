// The station's SQLite file: WAL journal, foreign keys on, numbered forward-only migrations.
// A finished run is frozen by triggers, so no code path (or bug) can edit one afterwards.

import { readFileSync } from 'node:fs';
import Database from 'better-sqlite3';
import { ExpectedFailure } from './expected-failure.ts';

export type Db = Database.Database;

/** Index i holds the migration to user_version i + 1. Never edit one that has shipped; add another. */
export const MIGRATIONS: readonly string[] = [
  `
  CREATE TABLE procedures (
    id INTEGER PRIMARY KEY,
    code TEXT NOT NULL,
    revision TEXT NOT NULL,
    definition_json TEXT NOT NULL,
    UNIQUE (code, revision)
  );
  CREATE TABLE units (
    id INTEGER PRIMARY KEY,
    serial TEXT NOT NULL UNIQUE,
    model_code TEXT NOT NULL,
    created_at TEXT NOT NULL
  );
  CREATE TABLE runs (
    id INTEGER PRIMARY KEY,
    unit_id INTEGER NOT NULL REFERENCES units(id),
    procedure_id INTEGER NOT NULL REFERENCES procedures(id),
    operator TEXT NOT NULL,
    station TEXT NOT NULL,
    started_at TEXT NOT NULL,
    finished_at TEXT,
    verdict TEXT CHECK (verdict IN ('pass', 'fail')),
    final_thd_db REAL,
    limit_thd_db REAL NOT NULL,
    sheet_pdf_path TEXT
  );
  CREATE INDEX runs_by_unit ON runs (unit_id);
  CREATE TABLE trim_points (
    id INTEGER PRIMARY KEY,
    run_id INTEGER NOT NULL REFERENCES runs(id),
    sequence INTEGER NOT NULL,
    position REAL NOT NULL,
    recorded_at TEXT NOT NULL,
    settled INTEGER NOT NULL CHECK (settled IN (0, 1)),
    thd_db REAL NOT NULL,
    reading_json TEXT NOT NULL,
    UNIQUE (run_id, sequence)
  );
  CREATE TRIGGER trim_points_of_finished_run BEFORE INSERT ON trim_points
    WHEN (SELECT finished_at FROM runs WHERE id = NEW.run_id) IS NOT NULL
    BEGIN SELECT RAISE(ABORT, 'the run is finished; trim points cannot be added'); END;
  CREATE TRIGGER trim_points_never_change BEFORE UPDATE ON trim_points
    BEGIN SELECT RAISE(ABORT, 'recorded trim points are never edited'); END;
  CREATE TRIGGER trim_points_never_deleted BEFORE DELETE ON trim_points
    BEGIN SELECT RAISE(ABORT, 'recorded trim points are never deleted'); END;
  CREATE TRIGGER finished_runs_frozen
    BEFORE UPDATE OF unit_id, procedure_id, operator, station, started_at, finished_at, verdict, final_thd_db, limit_thd_db ON runs
    WHEN OLD.finished_at IS NOT NULL
    BEGIN SELECT RAISE(ABORT, 'a finished run is never edited'); END;
  CREATE TRIGGER runs_never_deleted BEFORE DELETE ON runs
    BEGIN SELECT RAISE(ABORT, 'runs are never deleted'); END;
  `,
  `
  ALTER TABLE runs ADD COLUMN verdict_reason TEXT;
  DROP TRIGGER finished_runs_frozen;
  CREATE TRIGGER finished_runs_frozen
    BEFORE UPDATE OF unit_id, procedure_id, operator, station, started_at, finished_at, verdict, verdict_reason, final_thd_db, limit_thd_db ON runs
    WHEN OLD.finished_at IS NOT NULL
    BEGIN SELECT RAISE(ABORT, 'a finished run is never edited'); END;
  CREATE TABLE trim_assessments (
    id INTEGER PRIMARY KEY,
    run_id INTEGER NOT NULL REFERENCES runs(id),
    after_sequence INTEGER NOT NULL,
    assessed_at TEXT NOT NULL,
    assessment_json TEXT NOT NULL,
    UNIQUE (run_id, after_sequence)
  );
  CREATE TABLE warm_checks (
    id INTEGER PRIMARY KEY,
    run_id INTEGER NOT NULL REFERENCES runs(id),
    recorded_at TEXT NOT NULL,
    position REAL NOT NULL,
    cold_temperature_c REAL NOT NULL,
    warm_temperature_c REAL NOT NULL,
    reading_json TEXT NOT NULL,
    result_json TEXT NOT NULL
  );
  CREATE TRIGGER assessments_of_finished_run BEFORE INSERT ON trim_assessments
    WHEN (SELECT finished_at FROM runs WHERE id = NEW.run_id) IS NOT NULL
    BEGIN SELECT RAISE(ABORT, 'the run is finished'); END;
  CREATE TRIGGER warm_checks_of_finished_run BEFORE INSERT ON warm_checks
    WHEN (SELECT finished_at FROM runs WHERE id = NEW.run_id) IS NOT NULL
    BEGIN SELECT RAISE(ABORT, 'the run is finished'); END;
  CREATE TRIGGER assessments_never_change BEFORE UPDATE ON trim_assessments
    BEGIN SELECT RAISE(ABORT, 'recorded assessments are never edited'); END;
  CREATE TRIGGER assessments_never_deleted BEFORE DELETE ON trim_assessments
    BEGIN SELECT RAISE(ABORT, 'recorded assessments are never deleted'); END;
  CREATE TRIGGER warm_checks_never_change BEFORE UPDATE ON warm_checks
    BEGIN SELECT RAISE(ABORT, 'recorded warm checks are never edited'); END;
  CREATE TRIGGER warm_checks_never_deleted BEFORE DELETE ON warm_checks
    BEGIN SELECT RAISE(ABORT, 'recorded warm checks are never deleted'); END;
  CREATE TRIGGER sheet_path_set_once BEFORE UPDATE OF sheet_pdf_path ON runs
    WHEN OLD.sheet_pdf_path IS NOT NULL
    BEGIN SELECT RAISE(ABORT, 'a recorded sheet is never replaced'); END;
  CREATE TRIGGER procedures_never_change BEFORE UPDATE ON procedures
    BEGIN SELECT RAISE(ABORT, 'a procedure revision never changes; store a new revision'); END;
  CREATE TRIGGER procedures_never_deleted BEFORE DELETE ON procedures
    BEGIN SELECT RAISE(ABORT, 'procedures are never deleted'); END;
  `,
  // Issue 7: the stimulus with each point, unsettled points kept out of the fit until confirmed,
  // the verdict's reasons, and the log of warnings raised and cleared.
  `
  ALTER TABLE trim_points ADD COLUMN stimulus_hz REAL;
  ALTER TABLE trim_points ADD COLUMN stimulus_level_dbfs REAL;
  ALTER TABLE trim_points ADD COLUMN in_fit INTEGER NOT NULL DEFAULT 1 CHECK (in_fit IN (0, 1));
  ALTER TABLE runs ADD COLUMN verdict_reasons_json TEXT;
  DROP TRIGGER finished_runs_frozen;
  CREATE TRIGGER finished_runs_frozen
    BEFORE UPDATE OF unit_id, procedure_id, operator, station, started_at, finished_at, verdict, verdict_reason, verdict_reasons_json, final_thd_db, limit_thd_db ON runs
    WHEN OLD.finished_at IS NOT NULL
    BEGIN SELECT RAISE(ABORT, 'a finished run is never edited'); END;
  CREATE TABLE point_confirmations (
    id INTEGER PRIMARY KEY,
    run_id INTEGER NOT NULL REFERENCES runs(id),
    point_id INTEGER NOT NULL UNIQUE REFERENCES trim_points(id),
    after_sequence INTEGER NOT NULL,
    confirmed_at TEXT NOT NULL,
    assessment_json TEXT NOT NULL
  );
  CREATE TABLE warning_changes (
    id INTEGER PRIMARY KEY,
    run_id INTEGER NOT NULL REFERENCES runs(id),
    warning_id TEXT NOT NULL,
    change TEXT NOT NULL CHECK (change IN ('raised', 'cleared')),
    at TEXT NOT NULL,
    position REAL NOT NULL,
    after_sequence INTEGER NOT NULL,
    seen TEXT NOT NULL,
    source TEXT NOT NULL CHECK (source IN ('assessment', 'live'))
  );
  CREATE INDEX warning_changes_by_run ON warning_changes (run_id);
  CREATE TRIGGER confirmations_of_finished_run BEFORE INSERT ON point_confirmations
    WHEN (SELECT finished_at FROM runs WHERE id = NEW.run_id) IS NOT NULL
    BEGIN SELECT RAISE(ABORT, 'the run is finished'); END;
  CREATE TRIGGER confirmations_never_change BEFORE UPDATE ON point_confirmations
    BEGIN SELECT RAISE(ABORT, 'recorded confirmations are never edited'); END;
  CREATE TRIGGER confirmations_never_deleted BEFORE DELETE ON point_confirmations
    BEGIN SELECT RAISE(ABORT, 'recorded confirmations are never deleted'); END;
  CREATE TRIGGER warning_changes_of_finished_run BEFORE INSERT ON warning_changes
    WHEN (SELECT finished_at FROM runs WHERE id = NEW.run_id) IS NOT NULL
    BEGIN SELECT RAISE(ABORT, 'the run is finished'); END;
  CREATE TRIGGER warning_changes_never_change BEFORE UPDATE ON warning_changes
    BEGIN SELECT RAISE(ABORT, 'the warning log is never edited'); END;
  CREATE TRIGGER warning_changes_never_deleted BEFORE DELETE ON warning_changes
    BEGIN SELECT RAISE(ABORT, 'the warning log is never deleted'); END;
  `,
  // The live readings each point was recorded after: confirming an earlier unsettled point
  // re-assesses the run, and the warnings that came from the final point's series must survive it.
  `
  ALTER TABLE trim_points ADD COLUMN live_json TEXT;
  `,
  // Issue 8: each row's check value (stored-record.ts), so a changed byte inside a record is noticed
  // when it is read. Rows written before stay NULL: there is nothing to check them against.
  `
  ALTER TABLE procedures ADD COLUMN crc INTEGER;
  ALTER TABLE units ADD COLUMN crc INTEGER;
  ALTER TABLE runs ADD COLUMN crc INTEGER;
  ALTER TABLE trim_points ADD COLUMN crc INTEGER;
  ALTER TABLE trim_assessments ADD COLUMN crc INTEGER;
  ALTER TABLE point_confirmations ADD COLUMN crc INTEGER;
  ALTER TABLE warning_changes ADD COLUMN crc INTEGER;
  ALTER TABLE warm_checks ADD COLUMN crc INTEGER;
  `,
  // Issue 9: the station's level calibrations and chain checks, never edited, and the calibration
  // each run was measured with.
  `
  CREATE TABLE calibrations (
    id INTEGER PRIMARY KEY,
    made_at TEXT NOT NULL,
    operator TEXT NOT NULL,
    station TEXT NOT NULL,
    setup_json TEXT NOT NULL,
    output_dbu_at_fs REAL NOT NULL,
    input_dbu_at_fs REAL NOT NULL,
    detail_json TEXT NOT NULL,
    crc INTEGER
  );
  CREATE TABLE chain_checks (
    id INTEGER PRIMARY KEY,
    calibration_id INTEGER NOT NULL REFERENCES calibrations(id),
    measured_at TEXT NOT NULL,
    operator TEXT NOT NULL,
    result_json TEXT NOT NULL,
    judgement_json TEXT NOT NULL,
    pass INTEGER NOT NULL CHECK (pass IN (0, 1)),
    crc INTEGER
  );
  CREATE INDEX chain_checks_by_calibration ON chain_checks (calibration_id);
  CREATE TRIGGER calibrations_never_change BEFORE UPDATE ON calibrations
    BEGIN SELECT RAISE(ABORT, 'a recorded calibration is never edited'); END;
  CREATE TRIGGER calibrations_never_deleted BEFORE DELETE ON calibrations
    BEGIN SELECT RAISE(ABORT, 'calibrations are never deleted'); END;
  CREATE TRIGGER chain_checks_never_change BEFORE UPDATE ON chain_checks
    BEGIN SELECT RAISE(ABORT, 'a recorded chain check is never edited'); END;
  CREATE TRIGGER chain_checks_never_deleted BEFORE DELETE ON chain_checks
    BEGIN SELECT RAISE(ABORT, 'chain checks are never deleted'); END;
  ALTER TABLE runs ADD COLUMN calibration_id INTEGER REFERENCES calibrations(id);
  ALTER TABLE runs ADD COLUMN chain_check_id INTEGER REFERENCES chain_checks(id);
  ALTER TABLE runs ADD COLUMN calibration_expires_at TEXT;
  DROP TRIGGER finished_runs_frozen;
  CREATE TRIGGER finished_runs_frozen
    BEFORE UPDATE OF unit_id, procedure_id, operator, station, started_at, finished_at, verdict, verdict_reason, verdict_reasons_json, final_thd_db, limit_thd_db, calibration_id, chain_check_id, calibration_expires_at ON runs
    WHEN OLD.finished_at IS NOT NULL
    BEGIN SELECT RAISE(ABORT, 'a finished run is never edited'); END;
  `,
  // Issue 10: a retest names the run it repeats and why.
  `
  ALTER TABLE runs ADD COLUMN retest_of INTEGER REFERENCES runs(id);
  ALTER TABLE runs ADD COLUMN retest_reason TEXT;
  DROP TRIGGER finished_runs_frozen;
  CREATE TRIGGER finished_runs_frozen
    BEFORE UPDATE OF unit_id, procedure_id, operator, station, started_at, finished_at, verdict, verdict_reason, verdict_reasons_json, final_thd_db, limit_thd_db, calibration_id, chain_check_id, calibration_expires_at, retest_of, retest_reason ON runs
    WHEN OLD.finished_at IS NOT NULL
    BEGIN SELECT RAISE(ABORT, 'a finished run is never edited'); END;
  `,
  // Issue 10: each procedure step's results with their measurements (the limits as they were, with
  // every value), the station a run was made at as a row of its own, the lot or work order, and one
  // unfinished run per unit. Runs keep their station text: rows from before name no station row.
  `
  CREATE TABLE stations (
    id INTEGER PRIMARY KEY,
    name TEXT NOT NULL UNIQUE,
    first_seen_at TEXT NOT NULL,
    crc INTEGER
  );
  CREATE TRIGGER stations_never_change BEFORE UPDATE ON stations
    BEGIN SELECT RAISE(ABORT, 'a recorded station is never edited'); END;
  CREATE TRIGGER stations_never_deleted BEFORE DELETE ON stations
    BEGIN SELECT RAISE(ABORT, 'stations are never deleted'); END;
  ALTER TABLE runs ADD COLUMN lot TEXT;
  ALTER TABLE runs ADD COLUMN station_id INTEGER REFERENCES stations(id);
  DROP TRIGGER finished_runs_frozen;
  CREATE TRIGGER finished_runs_frozen
    BEFORE UPDATE OF unit_id, procedure_id, operator, station, started_at, finished_at, verdict, verdict_reason, verdict_reasons_json, final_thd_db, limit_thd_db, calibration_id, chain_check_id, calibration_expires_at, retest_of, retest_reason, lot, station_id ON runs
    WHEN OLD.finished_at IS NOT NULL
    BEGIN SELECT RAISE(ABORT, 'a finished run is never edited'); END;
  -- Only on new rows: a database from before may already hold two open runs of a unit, and keeps them.
  CREATE TRIGGER one_open_run_per_unit BEFORE INSERT ON runs
    WHEN NEW.finished_at IS NULL AND EXISTS (SELECT 1 FROM runs WHERE unit_id = NEW.unit_id AND finished_at IS NULL)
    BEGIN SELECT RAISE(ABORT, 'the unit already has an unfinished run'); END;
  CREATE TABLE step_results (
    id INTEGER PRIMARY KEY,
    run_id INTEGER NOT NULL REFERENCES runs(id),
    step_id TEXT NOT NULL,
    kind TEXT NOT NULL,
    attempt INTEGER NOT NULL CHECK (attempt >= 1),
    recorded_at TEXT NOT NULL,
    verdict TEXT NOT NULL CHECK (verdict IN ('pass', 'fail')),
    reasons_json TEXT NOT NULL,
    stimulus_json TEXT,
    readings_json TEXT,
    crc INTEGER,
    UNIQUE (run_id, step_id, attempt)
  );
  CREATE TABLE measurements (
    id INTEGER PRIMARY KEY,
    step_result_id INTEGER NOT NULL REFERENCES step_results(id),
    run_id INTEGER NOT NULL REFERENCES runs(id),
    quantity TEXT NOT NULL,
    value REAL,
    unit TEXT NOT NULL,
    low REAL,
    high REAL,
    verdict TEXT NOT NULL CHECK (verdict IN ('pass', 'fail')),
    note TEXT,
    crc INTEGER
  );
  CREATE INDEX measurements_by_run ON measurements (run_id);
  CREATE TRIGGER step_results_of_finished_run BEFORE INSERT ON step_results
    WHEN (SELECT finished_at FROM runs WHERE id = NEW.run_id) IS NOT NULL
    BEGIN SELECT RAISE(ABORT, 'the run is finished'); END;
  CREATE TRIGGER step_results_never_change BEFORE UPDATE ON step_results
    BEGIN SELECT RAISE(ABORT, 'recorded step results are never edited'); END;
  CREATE TRIGGER step_results_never_deleted BEFORE DELETE ON step_results
    BEGIN SELECT RAISE(ABORT, 'recorded step results are never deleted'); END;
  CREATE TRIGGER measurements_of_finished_run BEFORE INSERT ON measurements
    WHEN (SELECT finished_at FROM runs WHERE id = NEW.run_id) IS NOT NULL
    BEGIN SELECT RAISE(ABORT, 'the run is finished'); END;
  -- A measurement belongs to the run of its step result: the run_id beside it is for reading a run's at once.
  CREATE TRIGGER measurements_of_their_step_run BEFORE INSERT ON measurements
    WHEN NEW.run_id IS NOT (SELECT run_id FROM step_results WHERE id = NEW.step_result_id)
    BEGIN SELECT RAISE(ABORT, 'a measurement belongs to the run of its step result'); END;
  CREATE TRIGGER measurements_never_change BEFORE UPDATE ON measurements
    BEGIN SELECT RAISE(ABORT, 'recorded measurements are never edited'); END;
  CREATE TRIGGER measurements_never_deleted BEFORE DELETE ON measurements
    BEGIN SELECT RAISE(ABORT, 'recorded measurements are never deleted'); END;
  `,
];

/**
 * How long a write waits for another connection's write to finish before it gives up. SQLite
 * applies it only to transactions that take the write lock up front (BEGIN IMMEDIATE): a deferred
 * one that reads first and then must write fails at once when another writer got in between
 * (SQLite, "Isolation in SQLite" and sqlite3_busy_timeout). So every write here is immediate.
 */
export const BUSY_TIMEOUT_MS = 5000;

/** True for SQLite's "database is locked" family (SQLITE_BUSY and its extended codes). */
export function isDatabaseBusy(error: unknown): boolean {
  const code = (error as { code?: unknown } | null)?.code;
  return typeof code === 'string' && code.startsWith('SQLITE_BUSY');
}

/** True for SQLite's answers that the file is not a sound database (SQLITE_CORRUPT, SQLITE_NOTADB). */
export function isDatabaseDamaged(error: unknown): boolean {
  const code = (error as { code?: unknown } | null)?.code;
  return typeof code === 'string' && (code.startsWith('SQLITE_CORRUPT') || code === 'SQLITE_NOTADB');
}

/** A database that failed its check at start: never written to again by this station. */
export class DamagedDatabase extends ExpectedFailure {
  override name = 'DamagedDatabase';
  /** What SQLite reported, for the log. */
  readonly problems: string[];
  constructor(file: string, problems: string[]) {
    super(`The records database ${file} is damaged.`);
    this.problems = problems;
  }
}

/**
 * Above this size the start-up check is quick_check (pages and b-trees, in about linear time)
 * instead of integrity_check (which also matches every index against its table and takes longer
 * as the file grows): a start must stay within seconds on a station with years of records.
 */
export const FULL_CHECK_MAX_BYTES = 256 * 1024 * 1024;

/** SQLite's own check of the file; returns what it found wrong, or an empty list. */
export function checkDatabase(db: Db, { full }: { full: boolean }): string[] {
  // At most 20 problems: enough to log, and a badly broken file does not make a huge message.
  const rows = db.pragma(full ? 'integrity_check(20)' : 'quick_check(20)') as Record<string, string>[];
  const found = rows.map((row) => Object.values(row)[0]);
  return found.length === 1 && found[0] === 'ok' ? [] : found;
}

/** The technician's message for a database that stayed busy past the timeout. */
export function databaseBusyFailure(file: string): ExpectedFailure {
  return new ExpectedFailure(
    `The records database ${file} is busy: another Trimbench may be using this data folder. Close it and try again.`,
  );
}

/**
 * Opens (creating if needed) and migrates the database. Before migrating an existing file it
 * writes a copy beside it; a file from a newer Trimbench is refused rather than guessed at.
 */
export function openDatabase(file: string, { busyTimeoutMs = BUSY_TIMEOUT_MS }: { busyTimeoutMs?: number } = {}): Db {
  const db = new Database(file, { timeout: busyTimeoutMs });
  try {
    // Both before anything changes the file, even its journal mode: a damaged or newer file is
    // left exactly as it was found.
    refuseNewer(db, file);
    refuseDamaged(db, file);
    enterWal(db, busyTimeoutMs);
    db.pragma('foreign_keys = ON');
    // Every write the technician has seen confirmed must survive a power cut.
    db.pragma('synchronous = FULL');
    migrate(db, file);
    return db;
  } catch (error) {
    db.close();
    if (isDatabaseBusy(error)) throw databaseBusyFailure(file);
    if (isDatabaseDamaged(error)) throw new DamagedDatabase(file, [`${(error as Error).message}`]);
    throw error;
  }
}

function refuseDamaged(db: Db, file: string): void {
  // A file still empty (just created) has nothing to check.
  const pages = db.pragma('page_count', { simple: true }) as number;
  if (pages === 0) return;
  const pageSize = db.pragma('page_size', { simple: true }) as number;
  const problems = checkDatabase(db, { full: pages * pageSize <= FULL_CHECK_MAX_BYTES });
  if (problems.length > 0) throw new DamagedDatabase(file, problems);
}

/**
 * Opens a file that must not be written (damaged, read-only) for reading what can be read: the
 * readable image (the file with its write-ahead log) is copied into memory, its indexes rebuilt
 * from the tables and its schema brought up to date there; the file itself is never touched.
 */
export function openForReading(file: string): Db {
  let db: Db;
  try {
    db = new Database(file, { readonly: true, fileMustExist: true });
    db.pragma('user_version');
  } catch {
    // A file in write-ahead-log mode on read-only media cannot be opened in place without its
    // shared-memory file; its bytes can still be read into memory (what the log held is lost).
    db = new Database(asMemoryImage(readFileSync(file)));
  }
  try {
    refuseNewer(db, file);
    const image = db.serialize();
    db.close();
    const copy = new Database(asMemoryImage(image));
    rebuildIndexes(copy);
    copy.pragma('foreign_keys = ON');
    applyMigrations(copy, schemaVersion(copy));
    return copy;
  } catch (error) {
    if (db.open) db.close();
    throw error;
  }
}

/**
 * A damaged index can hide rows its table still holds (a query by run id that finds no trim points,
 * or not the latest assessment, where the table has them): a run would then read back short without
 * any check failing. Rebuilt from its table, an index shows every row the table holds. Table by
 * table, so one damaged table leaves the others' indexes rebuilt; a damaged table's rows fail as
 * they are read, and are reported so.
 */
function rebuildIndexes(db: Db): void {
  let tables: { name: string }[];
  try {
    tables = db.prepare<[], { name: string }>("SELECT name FROM sqlite_master WHERE type = 'table' AND name NOT LIKE 'sqlite_%'").all();
  } catch {
    return; // the schema itself is damaged: nothing can be rebuilt, and reading will say so
  }
  for (const { name } of tables) {
    try {
      db.exec(`REINDEX "${name.replaceAll('"', '""')}"`);
    } catch {
      // read what can be read
    }
  }
}

/**
 * Header bytes 18 and 19 are 2 in a WAL file and 1 in a rollback-journal one
 * (sqlite.org/fileformat2.html §1.3.3); a database in memory cannot use WAL, so its image is marked
 * as the latter, or SQLite refuses to read it.
 */
function asMemoryImage(image: Buffer): Buffer {
  if (image.length >= 20) image[18] = image[19] = 1;
  return image;
}

/** An empty database of today's schema in memory: what a station reads when its file cannot be read at all. */
export function openEmptyInMemory(): Db {
  const db = new Database(':memory:');
  applyMigrations(db, 0);
  return db;
}

/**
 * Switching a file into WAL needs an exclusive lock, and SQLite answers SQLITE_BUSY at once
 * rather than calling the busy handler when another connection holds a shared lock meanwhile (two
 * processes opening one fresh file). So the switch is retried here for as long as the busy
 * timeout allows. Once the file is in WAL mode the pragma is a no-op that never blocks.
 */
function enterWal(db: Db, busyTimeoutMs: number): void {
  const pauseMs = 20;
  const pause = new Int32Array(new SharedArrayBuffer(4));
  for (let waitedMs = 0; ; waitedMs += pauseMs) {
    try {
      db.pragma('journal_mode = WAL');
      return;
    } catch (error) {
      if (!isDatabaseBusy(error) || waitedMs >= busyTimeoutMs) throw error;
      Atomics.wait(pause, 0, 0, pauseMs); // a synchronous pause, as SQLite's own busy handler sleeps
    }
  }
}

/** Runs every migration after `from` and marks the schema current; the caller holds the transaction, if any. */
function applyMigrations(db: Db, from: number): void {
  for (const migration of MIGRATIONS.slice(from)) db.exec(migration);
  db.pragma(`user_version = ${MIGRATIONS.length}`);
}

function schemaVersion(db: Db): number {
  return db.pragma('user_version', { simple: true }) as number;
}

function refuseNewer(db: Db, file: string): void {
  const current = schemaVersion(db);
  if (current > MIGRATIONS.length) {
    throw new ExpectedFailure(
      `The database ${file} was written by a newer Trimbench (schema ${current}, this version knows ${MIGRATIONS.length}). Update Trimbench; the file was not changed.`,
    );
  }
}

/**
 * Brings the schema to the latest version in one IMMEDIATE transaction that re-reads the version
 * once it holds the write lock: another process opening the same fresh file at the same moment
 * either finished first (nothing left to do) or waits for this one. A crash part-way leaves the
 * file as it was, since the whole migration commits or none of it does.
 */
function migrate(db: Db, file: string): void {
  const latest = MIGRATIONS.length;
  let backedUpVersion = 0;
  // Bounded: each pass either migrates, finds nothing to do, or saw the version move under it.
  for (let attempt = 0; attempt < 3; attempt++) {
    const seen = schemaVersion(db);
    if (seen === latest) return;
    if (seen > 0 && seen !== backedUpVersion) {
      // VACUUM INTO cannot run inside a transaction, so the copy is taken first and the version it
      // holds is checked again under the lock. A time in the name: an earlier, interrupted
      // attempt's copy never blocks this one.
      const stamp = new Date().toISOString().replaceAll(':', '-');
      db.exec(`VACUUM INTO '${`${file}.before-schema-${seen + 1}-${stamp}`.replaceAll("'", "''")}'`);
      backedUpVersion = seen;
    }
    const done = db.transaction(() => {
      const current = schemaVersion(db);
      refuseNewer(db, file);
      if (current === latest) return true;
      // Changed since the copy was taken: take a copy of what is there now before touching it.
      if (current > 0 && current !== backedUpVersion) return false;
      applyMigrations(db, current);
      return true;
    }).immediate();
    if (done) return;
  }
  throw new ExpectedFailure(`The database ${file} kept changing while Trimbench was updating it. Close other Trimbench windows and start again.`);
}
