// Unit sheets as PDF files in a folder beside the database. A sheet is written once per
// finished run and never overwritten: it is the record that left the station.

import { mkdirSync, writeFileSync } from 'node:fs';
import { join } from 'node:path';
import type { Records } from './records.ts';
import { ExpectedFailure } from './expected-failure.ts';

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
      const pdf = await renderPdf();
      mkdirSync(folder, { recursive: true });
      const path = join(folder, sheetFileName(run.serial, run.id));
      try {
        writeFileSync(path, pdf, { flag: 'wx' });
      } catch (error) {
        if ((error as NodeJS.ErrnoException).code !== 'EEXIST') throw error;
        throw new ExpectedFailure(`A sheet file already exists at ${path} but is not recorded for run ${runId}; it was left as it is.`);
      }
      records.setSheetPath(runId, path);
      return { path, alreadySaved: false };
    },
  };
}
