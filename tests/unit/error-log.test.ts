// Raw internals never reach the technician: an unexpected error becomes a short message naming the
// log file and a reference, and the details go to the log in the data folder (issue 8, finding 8
// and "Errors" under "What must be true"). The log is JSON Lines (jsonlines.org): one JSON value per
// line, each line ending in \n.

import Database from 'better-sqlite3';
import { existsSync, readFileSync, writeFileSync } from 'node:fs';
import { join } from 'node:path';
import { afterEach, beforeEach, describe, expect, it, vi } from 'vitest';
import {
  ERROR_LOG_ENTRY_MAX_CHARS,
  ERROR_LOG_FILE,
  ERROR_LOG_OLD_FILE,
  ERROR_LOG_ROTATE_BYTES,
  openErrorLog,
  type ErrorLog,
} from '../../electron/services/error-log.ts';
import { ExpectedFailure } from '../../electron/services/expected-failure.ts';
import { dispatch, type Handlers } from '../../electron/services/handlers.ts';
import { ApiError } from '../../renderer/api.ts';
import { problemText } from '../../renderer/problem-text.ts';
import { noCaller, readingWithThd, tempDir } from '../support/station.ts';

let dir: ReturnType<typeof tempDir>;
let log: ErrorLog;
beforeEach(() => {
  dir = tempDir();
  log = openErrorLog(dir.path);
});
afterEach(() => {
  vi.restoreAllMocks();
  dir.remove();
});

/** Handlers whose listProcedures throws the given error; no other channel is called here. */
const throwing = (error: unknown) => ({ listProcedures: async () => Promise.reject(error) }) as unknown as Handlers;

const logLines = (path = log.path) => readFileSync(path, 'utf8').split('\n').filter((line) => line !== '');

function thrownBy(action: () => unknown): Error {
  try {
    action();
  } catch (error) {
    return error as Error;
  }
  throw new Error('expected a throw');
}

// Real errors of the kinds the technician saw, each built by the library that raises it.
const matrixError = new Error('Matrix is not symmetric');
// ECMA-404: a control character (U+0001) may not appear unescaped in a JSON string.
const jsonError = thrownBy(() => JSON.parse('{"operator": "A\u0001"}'));
// SQLite: an unknown keyword is a syntax error (SQLITE_ERROR), raised by better-sqlite3 as SqliteError.
const sqliteError = thrownBy(() => new Database(':memory:').exec('SELEC 1'));

describe('error log and technician messages', () => {
  it('builds the three raw errors it needs', () => {
    expect(jsonError).toBeInstanceOf(SyntaxError);
    expect(sqliteError.name).toBe('SqliteError');
    expect((sqliteError as Error & { code?: string }).code).toBe('SQLITE_ERROR');
  });

  it('answers an unexpected error with a short message naming the log, and logs the raw message and stack', async () => {
    const errors = [matrixError, jsonError, sqliteError];
    for (const [index, error] of errors.entries()) {
      const result = await dispatch(throwing(error), 'listProcedures', {}, noCaller, log);
      expect(result.ok).toBe(false);
      if (result.ok) continue;
      expect(result.error.name).toBe('InternalError');
      expect(result.error.message).not.toContain(error.message);
      expect(result.error.message).toContain(log.path);
      expect(result.error.message).toContain('list the procedures');
      const reference = /\bE-[0-9A-Z]{6}\b/.exec(result.error.message)?.[0];
      expect(reference).toBeDefined();

      const lines = logLines();
      expect(lines).toHaveLength(index + 1); // one line per error
      const entry = JSON.parse(lines[index]) as { time: string; reference: string; error: { name: string; message: string; stack: string } };
      expect(entry.reference).toBe(reference);
      expect(entry.error.name).toBe(error.name);
      expect(entry.error.message).toBe(error.message);
      expect(entry.error.stack).toContain(error.message);
      // RFC 3339 §5.6: date-time with fractional seconds and a numeric offset.
      expect(entry.time).toMatch(/^\d{4}-\d\d-\d\dT\d\d:\d\d:\d\d\.\d{3}[+-]\d\d:\d\d$/);
      expect(Number.isFinite(Date.parse(entry.time))).toBe(true);
    }
    expect(log.path).toBe(join(dir.path, ERROR_LOG_FILE));
  });

  it('without a log, still keeps the raw message from the technician and says where it went', async () => {
    vi.spyOn(console, 'error').mockImplementation(() => undefined);
    const result = await dispatch(throwing(matrixError), 'listProcedures', {}, noCaller);
    expect(!result.ok && result.error.message).not.toContain(matrixError.message);
    expect(!result.ok && result.error.message).toMatch(/console/);
  });

  it('passes an expected failure through unchanged and does not log it', async () => {
    const message = 'There is no run with id 999.';
    const result = await dispatch(throwing(new ExpectedFailure(message)), 'listProcedures', {}, noCaller, log);
    expect(result).toEqual({ ok: false, error: { name: 'ExpectedFailure', message } });
    expect(existsSync(log.path)).toBe(false);
  });

  it('refuses 10⁶ bad items with one short line naming the field, and logs a bounded entry', async () => {
    const reading = { ...readingWithThd(-40), flags: Array(1_000_000).fill('nonsense') };
    const payload = { runId: 1, position: 1, reading, live: null, stimulus: { on: true, frequencyHz: 14, levelDbfs: -12 } };
    const result = await dispatch({} as Handlers, 'recordTrimPoint', payload, noCaller, log);
    expect(!result.ok && result.error.name).toBe('InvalidRequest');
    if (result.ok) return;
    expect(result.error.message.length).toBeLessThan(300);
    expect(result.error.message).toContain('reading.flags');
    expect(result.error.message).not.toContain('\n'); // one line, not a dump with one line per item
    const lines = logLines();
    expect(lines).toHaveLength(1);
    expect(lines[0].length).toBeLessThanOrEqual(ERROR_LOG_ENTRY_MAX_CHARS);
  });

  it('names the first wrong field and counts the others', async () => {
    // zod reports every wrong field of an object, not just the first (zod docs: "ZodError.issues").
    const result = await dispatch({} as Handlers, 'openRun', { serial: 5, procedureId: 'one', operator: 7 }, noCaller, log);
    expect(!result.ok && result.error.message).toMatch(/^The request to open the run was refused: serial: .* \(and 2 more problems\)\.$/);
    expect(!result.ok && result.error.message).not.toMatch(/✖|→/); // z.prettifyError's markers
    const entry = JSON.parse(logLines()[0]) as { error: { name: string; message: string }; detail: { issueCount: number; issues: { path: string }[] } };
    expect(entry.error).toMatchObject({ name: 'InvalidRequest', message: !result.ok && result.error.message });
    expect(entry.detail.issueCount).toBe(3);
    expect(entry.detail.issues.map((issue) => issue.path)).toEqual(['serial', 'procedureId', 'operator']);
  });

  it('bounds an entry whose message and detail are huge', () => {
    log.record('test', new Error('x'.repeat(10_000_000)), { items: Array(1_000_000).fill('\u0000'.repeat(100)) });
    const [line] = logLines();
    expect(line.length).toBeLessThanOrEqual(ERROR_LOG_ENTRY_MAX_CHARS);
    expect(() => JSON.parse(line)).not.toThrow();
  });

  it('moves the log aside at the size bound and keeps one old file', () => {
    // A log just under the bound, built line by line; the next entry would cross it.
    const filler = `${'f'.repeat(1023)}\n`;
    const fullLog = filler.repeat(ERROR_LOG_ROTATE_BYTES / filler.length - 1) + `${'f'.repeat(filler.length - 10)}\n`;
    writeFileSync(log.path, fullLog);
    log.record('first after the bound', matrixError);
    const oldPath = join(dir.path, ERROR_LOG_OLD_FILE);
    expect(readFileSync(oldPath, 'utf8')).toBe(fullLog);
    expect(logLines()).toHaveLength(1);

    // A second rotation replaces the old file: two files at most.
    writeFileSync(log.path, fullLog.replaceAll('f', 'g'));
    log.record('second after the bound', matrixError);
    expect(readFileSync(oldPath, 'utf8')).toBe(fullLog.replaceAll('f', 'g'));
    expect(logLines()).toHaveLength(1);
  });

  it('does not rotate below the bound', () => {
    log.record('one', matrixError);
    log.record('two', jsonError);
    expect(logLines()).toHaveLength(2);
    expect(existsSync(join(dir.path, ERROR_LOG_OLD_FILE))).toBe(false);
  });

  it('never throws when the log cannot be written', async () => {
    const consoleError = vi.spyOn(console, 'error').mockImplementation(() => undefined);
    // POSIX: a path through a regular file fails with ENOTDIR, so neither the folder nor the file can be made.
    const file = join(dir.path, 'a-file');
    writeFileSync(file, 'not a folder');
    const broken = openErrorLog(join(file, 'sub'));
    expect(() => broken.record('test', matrixError)).not.toThrow();
    const result = await dispatch(throwing(sqliteError), 'listProcedures', {}, noCaller, broken);
    expect(!result.ok && result.error.name).toBe('InternalError');
    expect(!result.ok && result.error.message).not.toContain(sqliteError.message);
    expect(consoleError).toHaveBeenCalled();
  });
});

describe('page messages for unexpected errors', () => {
  it('shows main’s message as it is', () => {
    const message = 'There is no run with id 999.';
    expect(problemText(new ApiError(message, 'ExpectedFailure'), 'The run was not finished', 'Press Finish again.')).toBe(message);
  });

  it('turns a DOMException or a bug into what failed and what to do, naming the kind but not the raw text', () => {
    vi.spyOn(console, 'error').mockImplementation(() => undefined);
    // WebIDL: DOMException(message, name); getUserMedia rejects with NotReadableError when the device is busy (Media Capture and Streams §9.2).
    const busy = new DOMException('Could not start audio source', 'NotReadableError');
    const text = problemText(busy, 'The audio input could not be opened', 'Press Start capture again.');
    expect(text).toContain('NotReadableError');
    expect(text).not.toContain(busy.message);
    expect(text).toMatch(/^The audio input could not be opened: .*Press Start capture again\.$/);
    expect(problemText(jsonError, 'The unit was not opened', 'Press Open unit again.')).not.toContain(jsonError.message);
  });
});
