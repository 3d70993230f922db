// Saving a unit sheet: only a complete PDF is recorded, once per run, durably, and never over
// another file.

import { afterEach, beforeEach, describe, expect, it, vi } from 'vitest';
import { existsSync, mkdirSync, readdirSync, readFileSync, writeFileSync } from 'node:fs';
import { join } from 'node:path';
import { createSheets, sheetFileName } from '../../electron/services/sheets.ts';
import { sqliteRepository } from '../../electron/services/records-repository.ts';
import { DEMO_PROCEDURE } from '../../shared/procedures/demo-procedure.ts';
import { openTestStation, readingWithThd, tempDir } from '../support/station.ts';

// Every file-system call the sheet service makes, in order, so the test can check that the file
// and its folder are flushed before the path is recorded. The calls themselves go through.
const fsLog: string[] = [];
const openPaths = new Map<number, string>();
vi.mock('node:fs', async (importOriginal) => {
  const fs = await importOriginal<typeof import('node:fs')>();
  const wrapped = {
    ...fs,
    openSync: (path: string, ...rest: unknown[]) => {
      const fd = (fs.openSync as (...a: unknown[]) => number)(path, ...rest);
      openPaths.set(fd, String(path));
      return fd;
    },
    fsyncSync: (fd: number) => {
      fsLog.push(`fsync ${openPaths.get(fd)}`);
      return fs.fsyncSync(fd);
    },
    renameSync: (from: string, to: string) => {
      fsLog.push(`rename ${from} -> ${to}`);
      return fs.renameSync(from, to);
    },
  };
  return { ...wrapped, default: wrapped };
});

const STIMULUS = { on: true, frequencyHz: DEMO_PROCEDURE.trim.stimulusHz, levelDbfs: DEMO_PROCEDURE.trim.stimulusLevelDbfs };

/**
 * A minimal file with the two ends every PDF has: the "%PDF-" header (ISO 32000-1 §7.5.2) and
 * "%%EOF" on the last line (§7.5.5). `tag` makes renders tell apart.
 */
function pdf(tag: string, after = '\n'): Uint8Array {
  return new TextEncoder().encode(`%PDF-1.7\n% ${tag}\ntrailer\n<<>>\n%%EOF${after}`);
}

let dir: ReturnType<typeof tempDir>;
let station: ReturnType<typeof openTestStation>;
beforeEach(() => {
  dir = tempDir();
  station = openTestStation(dir.path);
  fsLog.length = 0;
});
afterEach(() => {
  station.close();
  dir.remove();
});

function finishedRun(serial: string): number {
  const procedureId = station.records.listProcedures()[0].id;
  const { run } = station.records.openRun({ serial, procedureId, operator: 'A. Tester' });
  station.records.recordTrimPoint({ runId: run.id, position: 3, reading: readingWithThd(-62), live: null, stimulus: STIMULUS });
  station.records.finishRun({ runId: run.id, asFailure: true });
  return run.id;
}

const sheetsFolder = () => join(dir.path, 'sheets');
const filesInSheets = () => (existsSync(sheetsFolder()) ? readdirSync(sheetsFolder()).sort() : []);

describe('unit sheet saving', () => {
  it('refuses an empty render, records nothing, and saves the sheet on the next try', async () => {
    const runId = finishedRun('MG20-2611-0060');
    const empty = station.sheets.savePdf(runId, async () => new Uint8Array(0));
    await expect(empty).rejects.toMatchObject({ name: 'ExpectedFailure', message: expect.stringMatching(/empty/) });
    expect(station.records.getRun(runId).run.sheetPdfPath).toBeNull();
    expect(filesInSheets()).toEqual([]);

    const good = pdf('second try');
    const saved = await station.sheets.savePdf(runId, async () => good);
    expect(saved.alreadySaved).toBe(false);
    expect(new Uint8Array(readFileSync(saved.path))).toEqual(good);
    expect(station.records.getRun(runId).run.sheetPdfPath).toBe(saved.path);
  });

  it('refuses renders that are not a whole PDF: no header, or cut before %%EOF (ISO 32000-1 §7.5.2, §7.5.5)', async () => {
    const runId = finishedRun('MG20-2611-0061');
    const whole = pdf('whole');
    const notPdf = new TextEncoder().encode('<!doctype html><p>sheet</p>\n%%EOF\n');
    const cutShort = whole.subarray(0, whole.length - 8); // the same file, its last line lost
    for (const bad of [notPdf, cutShort]) {
      await expect(station.sheets.savePdf(runId, async () => bad)).rejects.toMatchObject({
        name: 'ExpectedFailure',
        message: expect.stringMatching(/not a complete PDF/),
      });
    }
    expect(station.records.getRun(runId).run.sheetPdfPath).toBeNull();
    expect(filesInSheets()).toEqual([]);
    // An end-of-line after %%EOF is allowed (§7.5.5): CR LF here.
    const withCrLf = pdf('crlf', '\r\n');
    expect(new Uint8Array(readFileSync((await station.sheets.savePdf(runId, async () => withCrLf)).path))).toEqual(withCrLf);
  });

  it('renders once when two saves of a run overlap, and both get the same answer', async () => {
    const runId = finishedRun('MG20-2611-0062');
    let renders = 0;
    let releaseFirst!: () => void;
    const firstMayFinish = new Promise<void>((resolve) => (releaseFirst = resolve));
    const render = async () => {
      renders++;
      const mine = pdf(`render ${renders}`);
      await firstMayFinish; // both saves are in progress before either render returns
      return mine;
    };
    const first = station.sheets.savePdf(runId, render);
    const second = station.sheets.savePdf(runId, render);
    releaseFirst();
    const [a, b] = await Promise.all([first, second]);
    expect(renders).toBe(1);
    expect(b).toEqual(a);
    expect(new Uint8Array(readFileSync(a.path))).toEqual(pdf('render 1'));
    expect(filesInSheets()).toEqual([sheetFileName('MG20-2611-0062', runId)]);
  });

  it('never overwrites a file already holding the sheet name that is not a complete PDF', async () => {
    const runId = finishedRun('MG20-2611-0063');
    mkdirSync(sheetsFolder(), { recursive: true });
    const taken = join(sheetsFolder(), sheetFileName('MG20-2611-0063', runId));
    writeFileSync(taken, 'notes kept here by hand\n');
    const good = pdf('the sheet');
    const saved = await station.sheets.savePdf(runId, async () => good);
    expect(readFileSync(taken, 'utf8')).toBe('notes kept here by hand\n');
    expect(saved.path).not.toBe(taken);
    expect(saved.alreadySaved).toBe(false);
    expect(new Uint8Array(readFileSync(saved.path))).toEqual(good);
    expect(station.records.getRun(runId).run.sheetPdfPath).toBe(saved.path);
  });

  it('never takes a complete PDF already under the run\'s name as its sheet (another run with the same id before a restore)', async () => {
    const runId = finishedRun('MG20-2611-0064');
    mkdirSync(sheetsFolder(), { recursive: true });
    const earlier = join(sheetsFolder(), sheetFileName('MG20-2611-0064', runId));
    const earlierSheet = pdf('an earlier run 1 of this serial: FAIL');
    writeFileSync(earlier, earlierSheet);
    const good = pdf('this run');
    const saved = await station.sheets.savePdf(runId, async () => good);
    expect(saved.path).not.toBe(earlier);
    expect(saved.alreadySaved).toBe(false);
    expect(new Uint8Array(readFileSync(saved.path))).toEqual(good);
    expect(new Uint8Array(readFileSync(earlier))).toEqual(earlierSheet);
    expect(station.records.getRun(runId).run.sheetPdfPath).toBe(saved.path);
  });

  it('flushes the file, renames it, and flushes the folder before recording the path (Linux fsync(2), NOTES)', async () => {
    const runId = finishedRun('MG20-2611-0064');
    // The same service over a records object that notes when the path is recorded.
    const sheets = createSheets(
      {
        ...sqliteRepository(station.records),
        setSheetPath: async (id: number, path: string) => {
          fsLog.push(`record ${path}`);
          station.records.setSheetPath(id, path);
        },
      },
      sheetsFolder(),
    );
    const saved = await sheets.savePdf(runId, async () => pdf('durable'));
    const rename = fsLog.findIndex((entry) => entry.startsWith('rename ') && entry.endsWith(` -> ${saved.path}`));
    expect(rename).toBeGreaterThan(-1);
    const temporary = fsLog[rename].slice('rename '.length, fsLog[rename].indexOf(' -> '));
    expect(temporary).not.toBe(saved.path);
    const fileFlushed = fsLog.indexOf(`fsync ${temporary}`);
    const folderFlushed = fsLog.lastIndexOf(`fsync ${sheetsFolder()}`);
    const recorded = fsLog.indexOf(`record ${saved.path}`);
    expect(fileFlushed).toBeGreaterThan(-1);
    expect(fileFlushed).toBeLessThan(rename);
    // Directory fsync is not possible on Windows; everywhere else the rename must be flushed.
    if (process.platform !== 'win32') expect(folderFlushed).toBeGreaterThan(rename);
    expect(recorded).toBeGreaterThan(Math.max(rename, folderFlushed));
  });
});
