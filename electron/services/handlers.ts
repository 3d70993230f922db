// The IPC handlers as a plain object of async functions built from the services, and the one
// dispatcher that validates every payload against the contract before a handler sees it.
// Electron registers these with ipcMain.handle; the test harness calls the same object.

import { z } from 'zod';
import { IPC_CHANNELS, type IpcChannel } from '../../shared/ipc/channels.ts';
import { contract, type IpcResponse, type IpcResult } from '../../shared/ipc/contract.ts';
import { ExpectedFailure } from './expected-failure.ts';
import type { Records } from './records.ts';
import type { createSheets } from './sheets.ts';

/** What a handler may ask of the window that called it (the sheet view must be showing for PDF). */
export interface CallerContext {
  printToPdf(): Promise<Uint8Array>;
  /** Opens the print dialog; resolves false when the technician cancels. */
  print(): Promise<boolean>;
}

export interface Services {
  records: Records;
  sheets: ReturnType<typeof createSheets>;
  station: IpcResponse<'describeStation'>;
}

export type Handlers = {
  [C in IpcChannel]: (request: z.output<(typeof contract)[C]['request']>, caller: CallerContext) => Promise<IpcResponse<C>>;
};

export function createHandlers({ records, sheets, station }: Services): Handlers {
  return {
    describeStation: async () => station,
    listProcedures: async () => records.listProcedures(),
    openRun: async (request) => records.openRun(request),
    recordTrimPoint: async (request) => records.recordTrimPoint(request),
    includeUnsettledPoint: async (request) => records.includeUnsettledPoint(request),
    logWarningChanges: async (request) => records.logWarningChanges(request),
    recordWarmCheck: async (request) => records.recordWarmCheck(request),
    finishRun: async (request) => records.finishRun(request),
    saveSheetPdf: async ({ runId }, caller) => sheets.savePdf(runId, () => caller.printToPdf()),
    printSheet: async ({ runId }, caller) => {
      if (!records.getRun(runId).run.finishedAt) throw new ExpectedFailure('Finish the run before printing its unit sheet.');
      return { printed: await caller.print() };
    },
  };
}

const isChannel = (name: string): name is IpcChannel => (IPC_CHANNELS as readonly string[]).includes(name);

/** Validates, runs and wraps one call. Never throws: errors come back as `{ ok: false, error }`. */
export async function dispatch(
  handlers: Handlers,
  channel: string,
  payload: unknown,
  caller: CallerContext,
): Promise<IpcResult<unknown>> {
  if (!isChannel(channel)) return { ok: false, error: { name: 'InvalidRequest', message: `Unknown request “${channel}”.` } };
  const parsed = contract[channel].request.safeParse(payload);
  if (!parsed.success) {
    return {
      ok: false,
      error: { name: 'InvalidRequest', message: `Rejected ${channel}: ${z.prettifyError(parsed.error)}` },
    };
  }
  try {
    const handler = handlers[channel] as (request: unknown, caller: CallerContext) => Promise<unknown>;
    const value = contract[channel].response.parse(await handler(parsed.data, caller));
    return { ok: true, value };
  } catch (error) {
    if (error instanceof ExpectedFailure) return { ok: false, error: { name: error.name, message: error.message } };
    console.error(`[trimbench] ${channel} failed`, error);
    const message = error instanceof Error ? error.message : String(error);
    return { ok: false, error: { name: 'InternalError', message: `Internal error in ${channel}: ${message}` } };
  }
}

