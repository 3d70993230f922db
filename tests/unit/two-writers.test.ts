// Findings 3–4 of issue 8, the second writer: a data folder belongs to one running station, and a
// write that meets another connection's write waits for it (busy timeout) instead of failing at
// once; one that still cannot write is a plain message naming the file, never an internal error.

import { spawn, type ChildProcess } from 'node:child_process';
import { existsSync, readFileSync, writeFileSync } from 'node:fs';
import { hostname } from 'node:os';
import { join } from 'node:path';
import { pathToFileURL } from 'node:url';
import { afterEach, beforeEach, describe, expect, it } from 'vitest';
import { LOCK_FILE } from '../../electron/services/data-folder-lock.ts';
import { dispatch } from '../../electron/services/handlers.ts';
import { DATABASE_FILE, openStation } from '../../electron/services/station.ts';
import { noCaller, openTestStation, tempDir } from '../support/station.ts';

const stationModule = pathToFileURL(join(import.meta.dirname, '../../electron/services/station.ts')).href;

// Child modes: "station DIR" opens a station and keeps it; "hold-write FILE MS" takes SQLite's
// write lock (BEGIN IMMEDIATE plus a write) and keeps it MS milliseconds (0: until killed).
const CHILD = `
import Database from 'better-sqlite3';
import { openStation } from ${JSON.stringify(stationModule)};
const [mode, target, ms] = process.argv.slice(1);
if (mode === 'station') {
  globalThis.heldStation = openStation({ dataDir: target, stationName: 'other-bench' });
  process.stdout.write('ready\\n');
  setInterval(() => undefined, 1000);
} else {
  const db = new Database(target);
  // Kept reachable: a connection the collector finalizes is closed, and its lock with it.
  globalThis.heldDatabase = db;
  db.exec('BEGIN IMMEDIATE');
  db.exec('CREATE TABLE IF NOT EXISTS other_writer (x)');
  db.exec('INSERT INTO other_writer VALUES (1)');
  process.stdout.write('ready\\n');
  if (Number(ms) > 0) {
    // Blocks this process with the lock held, as a long write in another program would.
    Atomics.wait(new Int32Array(new SharedArrayBuffer(4)), 0, 0, Number(ms));
    db.exec('COMMIT');
    process.exit(0);
  }
  setInterval(() => undefined, 1000);
}
`;

const children: ChildProcess[] = [];

function startChild(...args: string[]): Promise<ChildProcess> {
  const child = spawn(process.execPath, ['--input-type=module', '--no-warnings', '-e', CHILD, ...args], {
    stdio: ['ignore', 'pipe', 'pipe'],
  });
  children.push(child);
  let output = '';
  let errors = '';
  child.stderr!.on('data', (chunk) => (errors += chunk));
  return new Promise((resolve, reject) => {
    child.stdout!.on('data', (chunk) => {
      output += chunk;
      if (output.includes('ready\n')) resolve(child);
    });
    child.on('close', (code) => reject(new Error(`child exited (${code}) before it was ready: ${errors}`)));
  });
}

function exited(child: ChildProcess): Promise<void> {
  if (child.exitCode !== null || child.signalCode !== null) return Promise.resolve();
  return new Promise((resolve) => child.once('close', () => resolve()));
}

const unit = { serial: 'MG20-2611-0042', operator: 'A. Tester' };

describe('one writer at a time', () => {
  let dir: ReturnType<typeof tempDir>;
  beforeEach(() => (dir = tempDir()));
  afterEach(async () => {
    for (const child of children.splice(0)) {
      child.kill('SIGKILL');
      await exited(child);
    }
    dir.remove();
  });

  it('a write waits for another connection’s write instead of failing at once', async () => {
    const station = openTestStation(dir.path);
    const procedureId = station.records.listProcedures()[0].id;
    // The other writer holds the lock for 1 s, well inside the 5 s busy timeout; a write that
    // waits (sqlite3_busy_timeout) succeeds once it commits. A deferred transaction that read
    // before it wrote would fail at once (SQLite: BEGIN DEFERRED, SQLITE_BUSY_SNAPSHOT).
    const holder = await startChild('hold-write', join(dir.path, DATABASE_FILE), '1000');
    const result = await dispatch(station.handlers, 'openRun', { ...unit, procedureId }, noCaller);
    await exited(holder);
    expect(result).toMatchObject({ ok: true });
    expect(station.db.prepare('SELECT count(*) AS n FROM other_writer').get()).toEqual({ n: 1 });
    station.close();
  });

  it('a database still busy after the timeout is a plain message naming the file, and nothing is written', async () => {
    const station = openStation({ dataDir: dir.path, stationName: 'test-bench-1', busyTimeoutMs: 200 });
    const procedureId = station.records.listProcedures()[0].id;
    const holder = await startChild('hold-write', join(dir.path, DATABASE_FILE), '0');
    const result = await dispatch(station.handlers, 'openRun', { ...unit, procedureId }, noCaller);
    holder.kill('SIGKILL');
    await exited(holder);
    expect(result).toEqual({
      ok: false,
      error: {
        name: 'ExpectedFailure',
        message: `The records database ${join(dir.path, DATABASE_FILE)} is busy: another Trimbench may be using this data folder. Close it and try again.`,
      },
    });
    // The refused call wrote nothing (the holder's uncommitted write died with it too).
    expect(station.db.prepare('SELECT count(*) AS n FROM units').get()).toEqual({ n: 0 });
    station.close();
  });

  it('a second station on the same data folder is refused, naming the folder and the process holding it', async () => {
    const other = await startChild('station', dir.path);
    let message = '';
    try {
      openTestStation(dir.path).close();
    } catch (error) {
      message = (error as Error).message;
    }
    expect(message).toContain(dir.path);
    expect(message).toContain(`process ${other.pid}`);
    // The refused station did not take the folder: the holder's lock file still names it.
    expect(JSON.parse(readFileSync(join(dir.path, LOCK_FILE), 'utf8'))).toMatchObject({ pid: other.pid });

    // Killed without closing, the holder leaves its lock behind; no process has that pid any more
    // (kill(2): ESRCH), so the next station takes the folder over.
    other.kill('SIGKILL');
    await exited(other);
    const station = openTestStation(dir.path);
    expect(JSON.parse(readFileSync(join(dir.path, LOCK_FILE), 'utf8'))).toMatchObject({ pid: process.pid });
    station.close();
    expect(existsSync(join(dir.path, LOCK_FILE))).toBe(false);
  });

  it('takes over a stale lock file left by a process that is gone, and releases the folder on close', async () => {
    // The pid of a process that has exited and been reaped.
    const gone = spawn(process.execPath, ['-e', '']);
    await exited(gone);
    writeFileSync(join(dir.path, LOCK_FILE), JSON.stringify({ pid: gone.pid, host: hostname(), since: '2026-01-05T09:00:00.000Z' }));
    const station = openTestStation(dir.path);
    station.close();
    expect(existsSync(join(dir.path, LOCK_FILE))).toBe(false);
    // Closed, the folder opens again; two stations of one process are refused like any other.
    const first = openTestStation(dir.path);
    expect(() => openTestStation(dir.path)).toThrow(`process ${process.pid}`);
    first.close();
  });

  it('a lock held on another host is never judged stale here', () => {
    writeFileSync(join(dir.path, LOCK_FILE), JSON.stringify({ pid: 999_999_999, host: 'bench-pc-elsewhere', since: '2026-01-05T09:00:00.000Z' }));
    expect(() => openTestStation(dir.path)).toThrow(`process 999999999 on bench-pc-elsewhere`);
  });
});
