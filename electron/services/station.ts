// Builds the station's services from a data folder: the one composition root used by the
// Electron main process, the browser test harness and the unit tests.

import { mkdirSync } from 'node:fs';
import { join } from 'node:path';
import { DEMO_PROCEDURE } from '../../shared/procedures/demo-procedure.ts';
import { lockDataFolder } from './data-folder-lock.ts';
import { databaseBusyFailure, isDatabaseBusy, openDatabase } from './database.ts';
import { createHandlers, type Handlers } from './handlers.ts';
import { createRecords } from './records.ts';
import { createSheets } from './sheets.ts';

export const DATABASE_FILE = 'trimbench.sqlite';
export const SHEETS_FOLDER = 'sheets';

export function openStation({
  dataDir,
  stationName,
  now,
  busyTimeoutMs,
}: {
  dataDir: string;
  stationName: string;
  now?: () => Date;
  /** How long a write waits for another writer (tests shorten it); the database's default otherwise. */
  busyTimeoutMs?: number;
}) {
  mkdirSync(dataDir, { recursive: true });
  // The folder first: a second station is refused before it touches the database.
  const lock = lockDataFolder(dataDir);
  const databasePath = join(dataDir, DATABASE_FILE);
  let db: ReturnType<typeof openDatabase> | undefined;
  try {
    db = openDatabase(databasePath, { busyTimeoutMs });
    const records = createRecords(db, { stationName, now });
    records.ensureProcedure(DEMO_PROCEDURE);
    const sheets = createSheets(records, join(dataDir, SHEETS_FOLDER));
    const handlers = busyAsExpected(
      createHandlers({
        records,
        sheets,
        station: { stationName, databasePath, sheetsFolder: sheets.folder },
      }),
      databasePath,
    );
    const opened = db;
    return {
      db: opened,
      records,
      sheets,
      handlers,
      close: () => {
        try {
          opened.close();
        } finally {
          lock.release();
        }
      },
    };
  } catch (error) {
    db?.close();
    lock.release();
    if (isDatabaseBusy(error)) throw databaseBusyFailure(databasePath);
    throw error;
  }
}

/**
 * A database still busy after the timeout (another program holding the write lock) is something
 * the technician can act on, so it crosses IPC as an expected failure naming the file.
 */
function busyAsExpected(handlers: Handlers, databasePath: string): Handlers {
  const wrapped = {} as Record<string, unknown>;
  for (const [channel, handler] of Object.entries(handlers) as [string, (...args: unknown[]) => Promise<unknown>][]) {
    wrapped[channel] = async (...args: unknown[]) => {
      try {
        return await handler(...args);
      } catch (error) {
        if (isDatabaseBusy(error)) throw databaseBusyFailure(databasePath);
        throw error;
      }
    };
  }
  return wrapped as Handlers;
}
