// Builds the station's services from a data folder: the one composition root used by the
// Electron main process, the browser test harness and the unit tests.
//
// It also owns whether the records may be written. A database that fails its start-up check, or
// cannot be written, is opened for reading only; one found damaged later stops writing at once.
// Either way the technician is told in words which file, what happened and what to do.

import { existsSync, mkdirSync } from 'node:fs';
import { join } from 'node:path';
import { DEMO_PROCEDURE } from '../../shared/procedures/demo-procedure.ts';
import { listBackups, takeDailyBackup } from './backups.ts';
import { lockDataFolder } from './data-folder-lock.ts';
import {
  DamagedDatabase,
  databaseBusyFailure,
  isDatabaseBusy,
  isDatabaseDamaged,
  openDatabase,
  openEmptyInMemory,
  openForReading,
  type Db,
} from './database.ts';
import { openErrorLog, type ErrorLog } from './error-log.ts';
import { ExpectedFailure } from './expected-failure.ts';
import { UnreadableRecord } from './stored-record.ts';
import { createHandlers, type Handlers } from './handlers.ts';
import { createCalibrations } from './calibrations.ts';
import { createRecords } from './records.ts';
import { sqliteRepository } from './records-repository.ts';
import { openStationSettings } from './station-settings.ts';
import { createSheets } from './sheets.ts';

export const DATABASE_FILE = 'trimbench.sqlite';
export const SHEETS_FOLDER = 'sheets';

/** Where problems the technician is not shown in full are written: the data folder's error log. */
export type ProblemLog = Pick<ErrorLog, 'record'>;

/** The technician's message for each way the records can be unwritable; each names the file. */
function lastBackup(dataDir: string): string {
  const backup = listBackups(dataDir)[0];
  return backup
    ? `The last backup is ${backup.path} (taken ${backup.takenAt.toISOString().slice(0, 16).replace('T', ' ')} UTC).`
    : 'There is no backup of it yet.';
}

export const recordsMessages = {
  damaged: (file: string, dataDir: string) =>
    `The records database ${file} is damaged, so Trimbench records nothing more in it. Units already recorded can still be opened to read, but what is shown may be incomplete. ` +
    `Close Trimbench and tell the station's maintainer; keep the damaged file. ${lastBackup(dataDir)}`,
  readOnly: (file: string) =>
    `The records database ${file} cannot be written: the file or its folder is read-only. Nothing is recorded until it can be. ` +
    `Check the folder's permissions (or that its drive is not write-protected), then restart Trimbench.`,
  full: (file: string) => `The disk holding ${file} is full: nothing from this step was saved. Free some space on that disk, then try again.`,
  diskError: (file: string) =>
    `The records database ${file} could not be written (the disk reported an error): nothing from this step was saved. Check the drive, then try again.`,
  missing: (file: string) =>
    `The records database ${file} is gone: its folder was moved or deleted, or its drive was removed. Nothing from this step was saved. ` +
    `Put the folder back, then restart Trimbench.`,
  unreadable: (file: string, dataDir: string) =>
    `The records database ${file} cannot be read at all, so no unit can be opened or recorded. Close Trimbench and tell the station's maintainer; ` +
    `keep the file. ${lastBackup(dataDir)}`,
};

/** SQLite's answers that the file cannot be written, as the technician's message; null for anything else. */
function unwritableMessage(error: unknown, file: string): string | null {
  const code = (error as { code?: unknown } | null)?.code;
  if (typeof code !== 'string') return null;
  if (code.startsWith('SQLITE_READONLY')) return recordsMessages.readOnly(file);
  if (code === 'SQLITE_FULL') return recordsMessages.full(file);
  if (code.startsWith('SQLITE_IOERR')) return recordsMessages.diskError(file);
  if (code.startsWith('SQLITE_CANTOPEN')) return existsSync(file) ? recordsMessages.readOnly(file) : recordsMessages.missing(file);
  return null;
}

/** A data folder that cannot take the lock file because nothing can be written there. */
function folderUnwritableMessage(error: unknown, file: string): string | null {
  const code = (error as NodeJS.ErrnoException).code;
  if (code === 'EROFS' || code === 'EACCES' || code === 'EPERM') return recordsMessages.readOnly(file);
  if (code === 'ENOSPC') return recordsMessages.full(file);
  return null;
}

function makeDataFolder(dataDir: string): void {
  try {
    mkdirSync(dataDir, { recursive: true });
  } catch (error) {
    const code = (error as NodeJS.ErrnoException).code ?? 'unknown error';
    throw new ExpectedFailure(
      `The data folder ${dataDir} cannot be created (${code}). Check that its drive is connected and writable, then start Trimbench again.`,
    );
  }
}

export function openStation({
  dataDir,
  stationName,
  now,
  busyTimeoutMs,
  log: givenLog,
}: {
  dataDir: string;
  stationName: string;
  now?: () => Date;
  /** How long a write waits for another writer (tests shorten it); the database's default otherwise. */
  busyTimeoutMs?: number;
  /** Where details go (tests give their own); the data folder's error log otherwise. */
  log?: ProblemLog;
}) {
  makeDataFolder(dataDir);
  const errorLog = openErrorLog(dataDir);
  const log: ProblemLog = givenLog ?? errorLog;
  const databasePath = join(dataDir, DATABASE_FILE);
  /** Why the records cannot be written, in the technician's words; null while they can. */
  let notWritable: string | null = null;
  // The folder first: a second station is refused before it touches the database. A folder no one
  // can write needs no lock: the station opens it to read.
  let lock: ReturnType<typeof lockDataFolder> | null = null;
  try {
    lock = lockDataFolder(dataDir);
  } catch (error) {
    notWritable = folderUnwritableMessage(error, databasePath);
    if (notWritable === null) throw error;
    log.record('locking the data folder', error);
  }
  let db: Db | undefined;
  try {
    if (notWritable === null) {
      try {
        db = openDatabase(databasePath, { busyTimeoutMs });
      } catch (error) {
        if (isDatabaseBusy(error)) throw databaseBusyFailure(databasePath);
        notWritable =
          error instanceof DamagedDatabase ? recordsMessages.damaged(databasePath, dataDir) : unwritableMessage(error, databasePath);
        if (notWritable === null) throw error;
        log.record('opening the records database', error, error instanceof DamagedDatabase ? error.problems : undefined);
      }
    }
    if (db === undefined) {
      const readable = openReadable(databasePath, log);
      if (readable === null) notWritable = recordsMessages.unreadable(databasePath, dataDir);
      db = readable ?? openEmptyInMemory();
    }
    if (notWritable === null) {
      try {
        takeDailyBackup(db, dataDir, now?.());
      } catch (error) {
        // A missing copy is not a reason to stop the line; the log says why it is missing.
        log.record('taking the daily backup', error);
      }
    }

    const settings = openStationSettings(dataDir, stationName, now);
    const whyNotWritable = () => notWritable ?? (existsSync(databasePath) ? null : recordsMessages.missing(databasePath));
    const recordsOver = (over: Db) => {
      const calibrations = createCalibrations(over, {
        stationName: () => settings.get().stationName,
        now,
        refuseUnlessWritable: () => {
          const refusal = whyNotWritable();
          if (refusal !== null) throw new ExpectedFailure(refusal);
        },
      });
      const records = createRecords(over, {
        stationName: () => settings.get().stationName,
        calibrations,
        settings: () => settings.get(),
        now,
        onUnreadable: (record) => {
          log.record(`reading ${record.what}`, record, record.detail);
          // SQLite itself found the file damaged while reading: nothing more is written to it.
          if (record.inFile) notWritable ??= recordsMessages.damaged(databasePath, dataDir);
        },
        whyNotWritable,
      });
      return { records, calibrations };
    };
    let services: ReturnType<typeof recordsOver>;
    try {
      services = recordsOver(db);
    } catch (error) {
      // A damaged file whose very schema cannot be read: nothing in it can be shown.
      if (notWritable === null) throw error;
      log.record('reading the records database schema', error);
      db.close();
      notWritable = recordsMessages.unreadable(databasePath, dataDir);
      db = openEmptyInMemory();
      services = recordsOver(db);
    }
    const { records, calibrations } = services;
    const opened = db;
    if (notWritable === null) {
      try {
        records.ensureProcedure(DEMO_PROCEDURE);
      } catch (error) {
        // A built-in revision that contradicts the stored one, or a stored one found damaged: the
        // station reads, and records nothing.
        if (!(error instanceof ExpectedFailure)) throw error;
        log.record('storing the built-in procedure', error, error instanceof UnreadableRecord ? error.detail : undefined);
        notWritable = error instanceof UnreadableRecord ? recordsMessages.damaged(databasePath, dataDir) : error.message;
      }
    }
    const repository = sqliteRepository(records);
    const sheets = createSheets(repository, join(dataDir, SHEETS_FOLDER));
    const handlers = databaseProblemsAsExpected(
      createHandlers({
        records: repository,
        sheets,
        calibrations,
        settings,
        station: { databasePath, sheetsFolder: sheets.folder },
      }),
      databasePath,
      {
        log,
        stopWriting: () => (notWritable ??= recordsMessages.damaged(databasePath, dataDir)),
      },
    );
    return {
      db: opened,
      /** The data folder's log: the dispatcher writes each unexpected error there. */
      errorLog,
      records,
      /** The records as callers outside main's handlers (the command line) use them: every operation awaited. */
      repository,
      sheets,
      handlers,
      /** Why nothing can be recorded at this station now, or null: the page shows it from the start. */
      recordsProblem: () => notWritable,
      close: () => {
        try {
          opened.close();
        } finally {
          lock?.release();
        }
      },
    };
  } catch (error) {
    db?.close();
    lock?.release();
    if (isDatabaseBusy(error)) throw databaseBusyFailure(databasePath);
    throw error;
  }
}

/** The damaged or unwritable file opened for reading only, or null when not even that works. */
function openReadable(file: string, log: ProblemLog): Db | null {
  try {
    return openForReading(file);
  } catch (error) {
    log.record('opening the records database for reading', error);
    return null;
  }
}

/**
 * What the database says that a technician can act on crosses IPC as an expected failure naming
 * the file: busy (another program holds the write lock), damaged (and from then on nothing more is
 * written), read-only, full, a disk error, a file gone.
 */
function databaseProblemsAsExpected(
  handlers: Handlers,
  databasePath: string,
  { log, stopWriting }: { log: ProblemLog; stopWriting: () => string },
): Handlers {
  const wrapped = {} as Record<string, unknown>;
  for (const [channel, handler] of Object.entries(handlers) as [string, (...args: unknown[]) => Promise<unknown>][]) {
    wrapped[channel] = async (...args: unknown[]) => {
      try {
        return await handler(...args);
      } catch (error) {
        if (isDatabaseBusy(error)) throw databaseBusyFailure(databasePath);
        if (isDatabaseDamaged(error)) {
          log.record(`${channel}: the records database is damaged`, error);
          throw new ExpectedFailure(stopWriting());
        }
        const unwritable = unwritableMessage(error, databasePath);
        if (unwritable !== null) {
          log.record(`${channel}: the records database cannot be written`, error);
          throw new ExpectedFailure(unwritable);
        }
        throw error;
      }
    };
  }
  return wrapped as Handlers;
}
