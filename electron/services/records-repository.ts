// The records as their callers (the IPC handlers, the sheets, the command line) use them: every
// operation answers with a Promise. The station's SQLite file answers at once; a records server
// could answer later, and would be added as another implementation of this interface without
// touching a caller.

import type { Records } from './records.ts';

/** The operations callers use; the rest of Records is the SQLite implementation's own. */
const OPERATIONS = [
  'whyNotWritable',
  'listProcedures',
  'listProcedureRevisions',
  'importProcedure',
  'ensureProcedure',
  'openRun',
  'getRun',
  'lookUpUnit',
  'recordTrimPoint',
  'includeUnsettledPoint',
  'logWarningChanges',
  'recordWarmCheck',
  'acknowledgeNotice',
  'completeTrim',
  'recordCheckStep',
  'recordRingingStep',
  'recordMaxLevel',
  'recordResponse',
  'finishRun',
  'setSheetPath',
] as const satisfies readonly (keyof Records)[];

type Operation = (typeof OPERATIONS)[number];

export type RecordsRepository = {
  [K in Operation]: (...args: Parameters<Records[K]>) => Promise<ReturnType<Records[K]>>;
};

/**
 * The station's SQLite records behind the interface. A throw becomes a rejection, so a caller
 * handles a refusal the same way whichever implementation answers.
 */
export function sqliteRepository(records: Records): RecordsRepository {
  const repository: Record<string, (...args: never[]) => Promise<unknown>> = {};
  for (const name of OPERATIONS) {
    const operation = records[name] as (...args: unknown[]) => unknown;
    repository[name] = async (...args: unknown[]) => operation(...args);
  }
  return repository as unknown as RecordsRepository;
}
