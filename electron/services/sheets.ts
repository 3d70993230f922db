// Unit sheets as PDF files in a folder beside the database. A sheet is written once per
// finished run and never overwritten: it is the record that left the station.

import { closeSync, existsSync, fsyncSync, mkdirSync, openSync, renameSync, unlinkSync, writeSync } from 'node:fs';
import { basename, dirname, join } from 'node:path';
import { ExpectedFailure } from './expected-failure.ts';
import type { RecordsRepository } from './records-repository.ts';

export function sheetFileName(serial: string, runId: number): string {
  return `${serial}_run-${runId}.pdf`;
}

/** The n-th name tried for a run's sheet: the plain name, then `_2`, `_3` … beside a file that is not ours. */
function candidateName(serial: string, runId: number, attempt: number): string {
  return attempt === 1 ? sheetFileName(serial, runId) : `${serial}_run-${runId}_${attempt}.pdf`;
}

/** Beyond this many foreign files in the way, something is wrong with the folder: refuse. */
const MAX_NAME_ATTEMPTS = 20;

const PDF_HEADER = '%PDF-';
const PDF_EOF = '%%EOF';
/** How far from the end to look for %%EOF; only white space may follow it. */
const TAIL_BYTES = 1024;
/** White-space characters of ISO 32000-1 §7.2.2 Table 1: NUL, HT, LF, FF, CR, SP. */
const PDF_WHITE_SPACE = new Set([0x00, 0x09, 0x0a, 0x0c, 0x0d, 0x20]);

/**
 * Whether bytes are a complete PDF file as far as its two ends show: the header "%PDF-" first
 * (ISO 32000-1 §7.5.2) and the end-of-file marker "%%EOF" last, possibly followed by an end of
 * line (§7.5.5). An empty or cut-short render fails this, so it is never recorded as a sheet.
 */
export function looksLikePdf(head: Uint8Array, tail: Uint8Array): boolean {
  if (head.length < PDF_HEADER.length) return false;
  for (let i = 0; i < PDF_HEADER.length; i++) if (head[i] !== PDF_HEADER.charCodeAt(i)) return false;
  let end = tail.length;
  while (end > 0 && PDF_WHITE_SPACE.has(tail[end - 1])) end--;
  if (end < PDF_EOF.length) return false;
  for (let i = 0; i < PDF_EOF.length; i++) if (tail[end - PDF_EOF.length + i] !== PDF_EOF.charCodeAt(i)) return false;
  return true;
}

function pdfBytesLookComplete(pdf: Uint8Array): boolean {
  return looksLikePdf(pdf.subarray(0, PDF_HEADER.length), pdf.subarray(Math.max(0, pdf.length - TAIL_BYTES)));
}

/**
 * Makes a folder's entries (a rename, a new file, a new subfolder) durable. A file's own fsync
 * does not cover the directory entry that names it (Linux fsync(2), NOTES); the directory has to
 * be opened and fsynced itself.
 */
export function fsyncFolder(folder: string): void {
  // Windows cannot open a directory as a file to flush it (and NTFS journals its metadata), so
  // there is nothing to do there.
  if (process.platform === 'win32') return;
  const fd = openSync(folder, 'r');
  try {
    fsyncSync(fd);
  } finally {
    closeSync(fd);
  }
}

let partialCounter = 0;

export function createSheets(records: RecordsRepository, folder: string) {
  /** One save at a time per run: a second request while one is running gets the same answer. */
  const inFlight = new Map<number, Promise<{ path: string; alreadySaved: boolean }>>();

  async function saveOnce(runId: number, renderPdf: () => Promise<Uint8Array>): Promise<{ path: string; alreadySaved: boolean }> {
    const { run } = await records.getRun(runId);
    if (!run.finishedAt) throw new ExpectedFailure('Finish the run before saving its unit sheet.');
    if (run.sheetPdfPath) return { path: run.sheetPdfPath, alreadySaved: true };
    const refusal = await records.whyNotWritable();
    if (refusal !== null) throw new ExpectedFailure(`The sheet was not saved. ${refusal}`);
    // A new sheets folder is itself an entry in the data folder: flush that too.
    if (mkdirSync(folder, { recursive: true }) !== undefined) fsyncFolder(dirname(folder));

    // The first free name. A file already there is never taken for this run's sheet, even a complete
    // PDF: after a database is restored from a backup, run ids are handed out again, and the sheet of
    // an earlier run with the same id (perhaps a FAIL) must not become this run's record. A file left
    // by an attempt that stopped before recording its path stays beside the new one, harmlessly.
    let path: string | null = null;
    for (let attempt = 1; attempt <= MAX_NAME_ATTEMPTS && path === null; attempt++) {
      const candidate = join(folder, candidateName(run.serial, run.id, attempt));
      if (!existsSync(candidate)) path = candidate;
    }
    if (path === null) {
      throw new ExpectedFailure(
        `The sheet for run ${run.id} was not saved: ${MAX_NAME_ATTEMPTS} files named ${sheetFileName(run.serial, run.id)} or like it are in ${folder}. Move them out of that folder and save again.`,
      );
    }

    const pdf = await renderPdf();
    if (pdf.length === 0) {
      throw new ExpectedFailure(`Sheet ${basename(path)} was not saved: the page printed an empty file. Save the sheet again.`);
    }
    if (!pdfBytesLookComplete(pdf)) {
      throw new ExpectedFailure(`Sheet ${basename(path)} was not saved: what the page printed is not a complete PDF. Save the sheet again.`);
    }

    // Written whole and flushed under a temporary name, renamed, and the rename flushed with the
    // folder before the path is recorded: a power cut leaves either no recorded sheet or a
    // recorded, complete file, never a recorded path with no file or an empty one.
    const partial = `${path}.${process.pid}-${++partialCounter}.partial`;
    const fd = openSync(partial, 'wx');
    try {
      try {
        let written = 0;
        while (written < pdf.length) written += writeSync(fd, pdf, written, pdf.length - written);
        fsyncSync(fd);
      } finally {
        closeSync(fd);
      }
      // rename() replaces an existing target, so the name must still be free. The data folder
      // is held by this one station process and saves are single-flight per run (run ids are
      // in the names), so nothing else can take it between this check and the rename.
      if (existsSync(path)) {
        throw new ExpectedFailure(`Sheet ${basename(path)} was not saved: a file of that name appeared in ${folder}. Save the sheet again.`);
      }
      renameSync(partial, path);
    } catch (error) {
      try {
        unlinkSync(partial);
      } catch {
        // Already renamed or never created: nothing to tidy.
      }
      throw error;
    }
    fsyncFolder(folder);
    await records.setSheetPath(runId, path);
    return { path, alreadySaved: false };
  }

  return {
    folder,
    savePdf(runId: number, renderPdf: () => Promise<Uint8Array>): Promise<{ path: string; alreadySaved: boolean }> {
      const running = inFlight.get(runId);
      if (running) return running;
      const saving = saveOnce(runId, renderPdf).finally(() => inFlight.delete(runId));
      inFlight.set(runId, saving);
      return saving;
    },
  };
}
