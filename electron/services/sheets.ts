// Unit sheets as PDF files in a folder beside the database. A sheet is written once per
// finished run and never overwritten: it is the record that left the station.

import { closeSync, existsSync, fsyncSync, mkdirSync, openSync, renameSync, statSync, writeSync } from 'node:fs';
import { join } from 'node:path';
import { ExpectedFailure } from './expected-failure.ts';
import type { Records } from './records.ts';

export function sheetFileName(serial: string, runId: number): string {
  return `${serial}_run-${runId}.pdf`;
}

export function createSheets(records: Records, folder: string) {
  return {
    folder,
    async savePdf(runId: number, renderPdf: () => Promise<Uint8Array>): Promise<{ path: string; alreadySaved: boolean }> {
      const { run } = records.getRun(runId);
      if (!run.finishedAt) throw new ExpectedFailure('Finish the run before saving its unit sheet.');
      if (run.sheetPdfPath) return { path: run.sheetPdfPath, alreadySaved: true };
      mkdirSync(folder, { recursive: true });
      const path = join(folder, sheetFileName(run.serial, run.id));
      // A complete file from an earlier attempt that crashed before recording it is this run's sheet.
      if (existsSync(path) && statSync(path).size > 0) {
        records.setSheetPath(runId, path);
        return { path, alreadySaved: true };
      }
      const pdf = await renderPdf();
      // Written whole and flushed before it gets its name, and named before it is recorded: a power
      // cut leaves either no sheet or a complete one, never a recorded empty file.
      const partial = `${path}.partial`;
      const fd = openSync(partial, 'w');
      try {
        writeSync(fd, pdf);
        fsyncSync(fd);
      } finally {
        closeSync(fd);
      }
      renameSync(partial, path);
      records.setSheetPath(runId, path);
      return { path, alreadySaved: false };
    },
  };
}
