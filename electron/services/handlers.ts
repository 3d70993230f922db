// The IPC handlers as a plain object of async functions built from the services, and the one
// dispatcher that validates every payload against the contract before a handler sees it.
// Electron registers these with ipcMain.handle; the test harness calls the same object.

import { closeSync, constants, fstatSync, openSync, readSync } from 'node:fs';
import { basename } from 'node:path';
import { z } from 'zod';
import { IPC_CHANNELS, type IpcChannel } from '../../shared/ipc/channels.ts';
import { contract, type IpcResponse, type IpcResult } from '../../shared/ipc/contract.ts';
import type { ErrorLog } from './error-log.ts';
import { SCOPE_FILE_MAX_BYTES } from '../../shared/procedures/ringing.ts';
import { ExpectedFailure } from './expected-failure.ts';
import type { Calibrations } from './calibrations.ts';
import type { RecordsRepository } from './records-repository.ts';
import type { StationSettingsStore } from './station-settings.ts';
import type { createSheets } from './sheets.ts';

/** What a handler may ask of the window that called it (the sheet view must be showing for PDF). */
export interface CallerContext {
  printToPdf(): Promise<Uint8Array>;
  /** Opens the print dialog; resolves false when the technician cancels. */
  print(): Promise<boolean>;
  /** Asks the technician for a procedure file to import (main's own file dialog); null when cancelled. */
  chooseProcedureFile(): Promise<string | null>;
  /**
   * Asks the technician for an oscilloscope's CSV export (main's own file dialog); null when
   * cancelled. Absent where there is no dialog to show (the command line, the headless line).
   */
  chooseScopeCapture?(): Promise<string | null>;
}

export interface Services {
  records: RecordsRepository;
  sheets: ReturnType<typeof createSheets>;
  calibrations: Calibrations;
  settings: StationSettingsStore;
  station: { databasePath: string; sheetsFolder: string };
}

export type Handlers = {
  [C in IpcChannel]: (request: z.output<(typeof contract)[C]['request']>, caller: CallerContext) => Promise<IpcResponse<C>>;
};

export function createHandlers({ records, sheets, calibrations, settings, station }: Services): Handlers {
  /** The settings, the latest calibration and its chain check, as the settings view shows them. */
  const stationCalibration = () => {
    const { calibration, chainCheck } = calibrations.current(settings.get(), null);
    return { settings: settings.get(), calibration, chainCheck };
  };
  const refuseUnlessWritable = async () => {
    const refusal = await records.whyNotWritable();
    if (refusal !== null) throw new ExpectedFailure(refusal);
  };
  return {
    // Asked afresh on each call: a name changed in the settings, or a problem found after start, shows from then on.
    describeStation: async () => ({ ...station, stationName: settings.get().stationName, recordsProblem: await records.whyNotWritable() }),
    listProcedures: () => records.listProcedures(),
    listProcedureRevisions: () => records.listProcedureRevisions(),
    openRun: (request) => records.openRun(request),
    lookUpUnit: ({ serial }) => records.lookUpUnit(serial),
    recordTrimPoint: (request) => records.recordTrimPoint(request),
    includeUnsettledPoint: (request) => records.includeUnsettledPoint(request),
    logWarningChanges: (request) => records.logWarningChanges(request),
    recordWarmCheck: (request) => records.recordWarmCheck(request),
    acknowledgeNotice: (request) => records.acknowledgeNotice(request),
    completeTrim: (request) => records.completeTrim(request),
    recordCheckStep: (request) => records.recordCheckStep(request),
    attachScopeCapture: async (request, caller) => {
      if (!caller.chooseScopeCapture) throw new ExpectedFailure('A scope capture is attached from the Trimbench window, where a file can be chosen.');
      const path = await caller.chooseScopeCapture();
      if (path === null) return { outcome: 'cancelled' as const, detail: await records.getRun(request.runId) };
      const text = readBoundedText(path, SCOPE_FILE_MAX_BYTES, 'a scope record', 'Export fewer points (a few periods of the square wave are enough) and attach that file.');
      return { outcome: 'recorded' as const, detail: await records.recordRingingStep({ ...request, text, fileName: basename(path) }) };
    },
    recordMaxLevel: (request) => records.recordMaxLevel(request),
    recordResponse: (request) => records.recordResponse(request),
    finishRun: (request) => records.finishRun(request),
    saveSheetPdf: async ({ runId }, caller) => sheets.savePdf(runId, () => caller.printToPdf()),
    printSheet: async ({ runId }, caller) => {
      if (!(await records.getRun(runId)).run.finishedAt) throw new ExpectedFailure('Finish the run before printing its unit sheet.');
      return { printed: await caller.print() };
    },
    getStationCalibration: async () => stationCalibration(),
    saveStationSettings: async (request) => {
      await refuseUnlessWritable();
      settings.save(request);
      return stationCalibration();
    },
    recordCalibration: async (request) => {
      calibrations.record(request);
      return stationCalibration();
    },
    recordChainCheck: async (request) => {
      calibrations.recordChainCheck(request, settings.get());
      return stationCalibration();
    },
    listCalibrations: async () => calibrations.list(),
    importProcedure: async (_request, caller) => {
      const path = await caller.chooseProcedureFile();
      if (path === null) return { outcome: 'cancelled' as const, code: null, revision: null, summary: null };
      return records.importProcedure(readBoundedText(path, PROCEDURE_FILE_MAX_BYTES, 'a procedure file', "Choose the procedure's JSON file."), basename(path));
    },
  };
}

/** A procedure file is a few kilobytes; anything far larger is not one, and is not read whole. */
const PROCEDURE_FILE_MAX_BYTES = 512 * 1024;

/**
 * A file the technician chose, read as text only when it is a regular file (after following a link)
 * no larger than `maxBytes`. Opened without blocking and checked on the open descriptor, so a FIFO
 * cannot stall main waiting for a writer, nor a device such as /dev/zero feed it without end; and
 * read at most one byte past its size then, so a file that changes meanwhile is refused.
 */
function readBoundedText(path: string, maxBytes: number, what: string, whatToDo: string): string {
  const unreadable = (error: unknown) =>
    new ExpectedFailure(`${path} cannot be read (${(error as NodeJS.ErrnoException).code ?? 'unknown error'}). Choose the file again.`);
  const tooLarge = (size: number) =>
    new ExpectedFailure(`${basename(path)} is ${(size / 1024).toFixed(0)} KiB, too large for ${what} (at most ${(maxBytes / 1024).toFixed(0)} KiB). ${whatToDo}`);
  let fd: number;
  try {
    fd = openSync(path, constants.O_RDONLY | (constants.O_NONBLOCK ?? 0));
  } catch (error) {
    throw unreadable(error);
  }
  try {
    let stats;
    try {
      stats = fstatSync(fd);
    } catch (error) {
      throw unreadable(error);
    }
    if (!stats.isFile()) throw new ExpectedFailure(`${basename(path)} is not a regular file (a device, a pipe or a folder), so it is not ${what}. Choose the file itself.`);
    if (stats.size > maxBytes) throw tooLarge(stats.size);
    const buffer = Buffer.alloc(Math.min(stats.size, maxBytes) + 1);
    let length = 0;
    try {
      for (let got = -1; got !== 0 && length < buffer.length; length += got) got = readSync(fd, buffer, length, buffer.length - length, null);
    } catch (error) {
      throw unreadable(error);
    }
    if (length !== stats.size) throw new ExpectedFailure(`${basename(path)} changed while it was read. Wait until the file is written in full, then choose it again.`);
    return buffer.toString('utf8', 0, length);
  } finally {
    closeSync(fd);
  }
}

const isChannel = (name: string): name is IpcChannel => (IPC_CHANNELS as readonly string[]).includes(name);

/** What each call does, in the words a message to the technician uses (a channel without words fails to compile). */
export const CHANNEL_ACTIONS: Record<IpcChannel, string> = {
  describeStation: 'describe this station',
  listProcedures: 'list the procedures',
  openRun: 'open the run',
  lookUpUnit: 'look up the unit',
  recordTrimPoint: 'record the trim point',
  includeUnsettledPoint: 'include the unsettled point',
  logWarningChanges: 'log the warning changes',
  recordWarmCheck: 'record the warm re-check',
  acknowledgeNotice: 'record the acknowledged notice',
  completeTrim: 'complete the trim step',
  recordCheckStep: 'record the check step',
  attachScopeCapture: 'record the scope capture',
  recordMaxLevel: 'record the max-level step',
  recordResponse: 'record the frequency response',
  finishRun: 'finish the run',
  saveSheetPdf: 'save the unit sheet as PDF',
  printSheet: 'print the unit sheet',
  getStationCalibration: 'read the station calibration',
  saveStationSettings: 'save the station settings',
  recordCalibration: 'record the calibration',
  recordChainCheck: 'record the chain check',
  listCalibrations: 'list the calibrations',
  importProcedure: 'import the procedure',
  listProcedureRevisions: 'list the procedure revisions',
};

/** Issues kept in the log for one refused call: enough to see the pattern, never a 10^6-item dump. */
const LOGGED_ISSUES_MAX = 20;
const FIELD_PATH_MAX_CHARS = 80;
const ISSUE_MESSAGE_MAX_CHARS = 200;

const shorten = (text: string, max: number) => (text.length > max ? `${text.slice(0, max - 1)}…` : text);

/** A field path as a person reads it: reading.harmonics[0].levelDbc. */
function fieldPath(path: readonly PropertyKey[]): string {
  if (path.length === 0) return 'the request';
  let out = '';
  for (const key of path) {
    if (typeof key === 'number') out += `[${key}]`;
    else out += `${out ? '.' : ''}${shorten(String(key), 32)}`;
  }
  return shorten(out, FIELD_PATH_MAX_CHARS);
}

/** One line for the technician: the first problem, named by its field, and how many more there are. */
function refusal(channel: IpcChannel, error: z.ZodError): string {
  const [first] = error.issues;
  const more = error.issues.length - 1;
  const problem = first ? `${fieldPath(first.path)}: ${shorten(first.message, ISSUE_MESSAGE_MAX_CHARS)}` : 'the request is not valid';
  // The issue's own message may end a sentence; this one ends it once.
  return `The request to ${CHANNEL_ACTIONS[channel]} was refused: ${problem.replace(/\.$/, '')}${more > 0 ? ` (and ${more} more problem${more > 1 ? 's' : ''})` : ''}.`;
}

function loggedIssues(error: z.ZodError): unknown {
  const issues = error.issues.slice(0, LOGGED_ISSUES_MAX).map((issue) => ({
    code: issue.code,
    path: fieldPath(issue.path),
    message: shorten(issue.message, ISSUE_MESSAGE_MAX_CHARS),
  }));
  return { issueCount: error.issues.length, issues };
}

/**
 * Validates, runs and wraps one call. Never throws: errors come back as `{ ok: false, error }`.
 * An expected failure's message goes to the technician as is; anything else is a bug whose raw
 * message (SQLite, JSON.parse, a numeric routine) means nothing at the bench: it goes to the log,
 * and the technician gets what failed, what to do and where the details are.
 */
export async function dispatch(
  handlers: Handlers,
  channel: string,
  payload: unknown,
  caller: CallerContext,
  log?: ErrorLog,
): Promise<IpcResult<unknown>> {
  if (!isChannel(channel)) return { ok: false, error: { name: 'InvalidRequest', message: `Unknown request “${shorten(channel, 60)}”.` } };
  const parsed = contract[channel].request.safeParse(payload);
  if (!parsed.success) {
    const message = refusal(channel, parsed.error);
    // The log keeps what the technician read and every issue (bounded); a stack of dispatch itself would say nothing.
    log?.record(`${channel}: request refused`, Object.assign(new Error(message), { name: 'InvalidRequest', stack: undefined }), loggedIssues(parsed.error));
    return { ok: false, error: { name: 'InvalidRequest', message } };
  }
  try {
    const handler = handlers[channel] as (request: unknown, caller: CallerContext) => Promise<unknown>;
    const value = contract[channel].response.parse(await handler(parsed.data, caller));
    return { ok: true, value };
  } catch (error) {
    if (error instanceof ExpectedFailure) return { ok: false, error: { name: error.name, message: error.message } };
    const where = log
      ? `Details are in ${log.path} (reference ${log.record(`${channel} failed`, error)}).`
      : (console.error(`[trimbench] ${channel} failed`, error), 'Details were written to the console.');
    return {
      ok: false,
      error: {
        name: 'InternalError',
        message: `Trimbench could not ${CHANNEL_ACTIONS[channel]} because of an unexpected problem in Trimbench itself, not in the unit. Check what the screen shows as saved, then try again; if it happens again, report it. ${where}`,
      },
    };
  }
}
