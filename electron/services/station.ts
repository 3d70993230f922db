// Builds the station's services from a data folder: the one composition root used by the
// Electron main process, the browser test harness and the unit tests.

import { mkdirSync } from 'node:fs';
import { join } from 'node:path';
import { DEMO_PROCEDURE } from '../../shared/procedures/demo-procedure.ts';
import { openDatabase } from './database.ts';
import { createHandlers } from './handlers.ts';
import { createRecords } from './records.ts';
import { createSheets } from './sheets.ts';

export const DATABASE_FILE = 'trimbench.sqlite';
export const SHEETS_FOLDER = 'sheets';

export function openStation({ dataDir, stationName, now }: { dataDir: string; stationName: string; now?: () => Date }) {
  mkdirSync(dataDir, { recursive: true });
  const databasePath = join(dataDir, DATABASE_FILE);
  const db = openDatabase(databasePath);
  const records = createRecords(db, { stationName, now });
  records.ensureProcedure(DEMO_PROCEDURE);
  const sheets = createSheets(records, join(dataDir, SHEETS_FOLDER));
  const handlers = createHandlers({
    records,
    sheets,
    station: { stationName, databasePath, sheetsFolder: sheets.folder },
  });
  return { db, records, sheets, handlers, close: () => db.close() };
}
