// Issue 8, finding 6: a records database that cannot be written says so in words naming the file,
// each case with its own message — a full disk, read-only media, a data folder gone or never
// creatable — and no point the technician saw confirmed is lost. The full and read-only disks are
// real: a small tmpfs (mount(8), tmpfs(5) "size=" option), where this machine allows mounting one;
// where it does not, those two tests are skipped and say so. A full database is also produced
// without mounting, through SQLite's page limit (PRAGMA max_page_count: "attempts to grow the
// database beyond this limit fail with SQLITE_FULL", sqlite.org/pragma.html#pragma_max_page_count).

import { execFileSync } from 'node:child_process';
import { mkdirSync, rmSync, statfsSync, writeFileSync } from 'node:fs';
import { join } from 'node:path';
import { afterEach, beforeEach, describe, expect, it } from 'vitest';
import { dispatch } from '../../electron/services/handlers.ts';
import { DATABASE_FILE, openStation } from '../../electron/services/station.ts';
import { DEMO_PROCEDURE } from '../../shared/procedures/demo-procedure.ts';
import { noCaller, readingWithThd, tempDir } from '../support/station.ts';

const STIMULUS = { on: true, frequencyHz: DEMO_PROCEDURE.trim.stimulusHz, levelDbfs: DEMO_PROCEDURE.trim.stimulusLevelDbfs };
const RAW_INTERNALS = /SQLITE_|disk I\/O|readonly database|Internal error|E[A-Z]{3,}\b/;
const quiet = { record: () => '' };

function tryMount(path: string, options: string): boolean {
  try {
    execFileSync('mount', ['-t', 'tmpfs', '-o', options, 'tmpfs', path], { stdio: 'ignore' });
    return true;
  } catch {
    return false;
  }
}

const canMount = (() => {
  const probe = tempDir('trimbench-mount-probe-');
  try {
    if (!tryMount(probe.path, 'size=64k')) return false;
    execFileSync('umount', [probe.path], { stdio: 'ignore' });
    return true;
  } catch {
    return false;
  } finally {
    probe.remove();
  }
})();
if (!canMount) console.log('unwritable-database: this machine does not allow mounting a tmpfs; the full-disk and read-only-disk tests are skipped.');

let dir: ReturnType<typeof tempDir>;
let mounted = false;
beforeEach(() => {
  dir = tempDir('trimbench-unwritable-');
  mounted = false;
});
afterEach(() => {
  if (mounted) execFileSync('umount', ['-l', dir.path], { stdio: 'ignore' });
  dir.remove();
});

async function openUnit(station: ReturnType<typeof openStation>, serial = 'MG20-2611-0042'): Promise<number> {
  const procedureId = station.records.listProcedures()[0].id;
  const opened = await dispatch(station.handlers, 'openRun', { serial, procedureId, operator: 'A. Tester' }, noCaller);
  if (!opened.ok) throw new Error(opened.error.message);
  const runId = (opened.value as { run: { id: number } }).run.id;
  // Safety first: main records no trim point before the notice is acknowledged.
  await dispatch(station.handlers, 'acknowledgeNotice', { runId, stepId: 'safety' }, noCaller);
  return runId;
}

const pointAt = (runId: number, position: number) => ({ runId, position, reading: readingWithThd(-40 - position), live: null, stimulus: STIMULUS });

/** Records points 0.01 apart until a call is refused; returns the positions confirmed and the refusal. */
async function recordUntilRefused(station: ReturnType<typeof openStation>, runId: number, limit: number) {
  const confirmed: number[] = [];
  for (let i = 0; i < limit; i++) {
    const position = Math.round(i) / 100;
    const result = await dispatch(station.handlers, 'recordTrimPoint', pointAt(runId, position), noCaller);
    if (!result.ok) return { confirmed, refusal: result.error.message };
    confirmed.push(position);
  }
  return { confirmed, refusal: null };
}

describe('a full database', () => {
  it('says the disk holding the file is full, loses no confirmed point, and records again once there is room (page limit)', async () => {
    const station = openStation({ dataDir: dir.path, stationName: 'test-bench-1', log: quiet });
    try {
      const runId = await openUnit(station);
      const pages = station.db.pragma('page_count', { simple: true }) as number;
      station.db.pragma(`max_page_count = ${pages + 4}`);
      const { confirmed, refusal } = await recordUntilRefused(station, runId, 400);
      expect(refusal).not.toBeNull();
      const file = join(dir.path, DATABASE_FILE);
      expect(refusal).toContain(`The disk holding ${file} is full`);
      expect(refusal).not.toMatch(RAW_INTERNALS);
      expect(confirmed.length).toBeGreaterThan(0);
      expect(station.records.getRun(runId).trimPoints.map((p) => p.position)).toEqual(confirmed);
      station.db.pragma('max_page_count = 1073741823');
      const again = await dispatch(station.handlers, 'recordTrimPoint', pointAt(runId, 9), noCaller);
      expect(again.ok).toBe(true);
    } finally {
      station.close();
    }
  });

  it.skipIf(!canMount)('says so on a real full disk (a 1 MiB tmpfs), loses no confirmed point, and records again once space is freed', async () => {
    mounted = tryMount(dir.path, 'size=1m');
    expect(mounted).toBe(true);
    const dataDir = join(dir.path, 'data');
    const station = openStation({ dataDir, stationName: 'test-bench-1', log: quiet });
    try {
      const runId = await openUnit(station);
      // Fill the disk to within about 64 KiB of full.
      const { bavail, bsize } = statfsSync(dir.path);
      const filler = join(dir.path, 'filler');
      writeFileSync(filler, new Uint8Array(Math.max(0, bavail * bsize - 64 * 1024)));
      const { confirmed, refusal } = await recordUntilRefused(station, runId, 400);
      const file = join(dataDir, DATABASE_FILE);
      expect(refusal).toContain(`The disk holding ${file} is full`);
      expect(refusal).not.toMatch(RAW_INTERNALS);
      expect(confirmed.length).toBeGreaterThan(0);
      rmSync(filler);
      const again = await dispatch(station.handlers, 'recordTrimPoint', pointAt(runId, 9), noCaller);
      expect(again.ok).toBe(true);
      expect(station.records.getRun(runId).trimPoints.map((p) => p.position)).toEqual([...confirmed, 9]);
    } finally {
      station.close();
    }
    // And after a restart, every confirmed point is there.
    const reopened = openStation({ dataDir, stationName: 'test-bench-1', log: quiet });
    try {
      expect(reopened.recordsProblem()).toBeNull();
      expect(reopened.records.getRun(1).trimPoints.length).toBeGreaterThan(1);
    } finally {
      reopened.close();
    }
  });
});

describe('a read-only database', () => {
  it.skipIf(!canMount)('opens to read, says the file cannot be written naming it, and refuses every write', async () => {
    mounted = tryMount(dir.path, 'size=4m');
    expect(mounted).toBe(true);
    const dataDir = join(dir.path, 'data');
    const station = openStation({ dataDir, stationName: 'test-bench-1', log: quiet });
    const runId = await openUnit(station);
    for (const position of [0, 1, 2]) station.records.recordTrimPoint(pointAt(runId, position));
    const written = JSON.stringify(station.records.getRun(runId));
    station.close();
    execFileSync('mount', ['-o', 'remount,ro', dir.path], { stdio: 'ignore' });

    const readOnly = openStation({ dataDir, stationName: 'test-bench-1', log: quiet });
    try {
      const file = join(dataDir, DATABASE_FILE);
      const problem = readOnly.recordsProblem();
      expect(problem).toContain(`The records database ${file} cannot be written`);
      expect(problem).toContain('read-only');
      // Reading what was recorded still works: opening the unit shows its run, unchanged.
      const procedureId = readOnly.records.listProcedures()[0].id;
      const opened = await dispatch(readOnly.handlers, 'openRun', { serial: 'MG20-2611-0042', procedureId, operator: 'A. Tester' }, noCaller);
      expect(opened.ok && opened.value).toEqual(JSON.parse(written));
      const refused = await dispatch(readOnly.handlers, 'recordTrimPoint', pointAt(runId, 3), noCaller);
      expect(refused.ok).toBe(false);
      if (!refused.ok) expect(refused.error.message).toBe(problem);
      const newUnit = await dispatch(readOnly.handlers, 'openRun', { serial: 'MG20-2611-0043', procedureId, operator: 'A. Tester' }, noCaller);
      expect(!newUnit.ok && newUnit.error.message).toContain(problem!);
    } finally {
      readOnly.close();
    }
  });
});

describe('a data folder that is gone', () => {
  it('says the database is gone, naming it, when its folder is deleted while the station runs', async () => {
    const station = openStation({ dataDir: join(dir.path, 'data'), stationName: 'test-bench-1', log: quiet });
    try {
      const runId = await openUnit(station);
      station.records.recordTrimPoint(pointAt(runId, 0));
      rmSync(join(dir.path, 'data'), { recursive: true, force: true });
      const result = await dispatch(station.handlers, 'recordTrimPoint', pointAt(runId, 1), noCaller);
      expect(result.ok).toBe(false);
      if (!result.ok) {
        expect(result.error.message).toContain(`The records database ${join(dir.path, 'data', DATABASE_FILE)} is gone`);
        expect(result.error.message).not.toMatch(RAW_INTERNALS);
      }
    } finally {
      station.close();
    }
  });

  it('says the data folder cannot be created, naming it, when its parent is a file', () => {
    const blocker = join(dir.path, 'not-a-folder');
    writeFileSync(blocker, 'x');
    const dataDir = join(blocker, 'data');
    // POSIX mkdir(2): ENOTDIR when a component of the path prefix is not a directory.
    expect(() => openStation({ dataDir, stationName: 'test-bench-1', log: quiet })).toThrow(`The data folder ${dataDir} cannot be created (ENOTDIR)`);
  });

  it('makes a new folder when a missing one can be created', () => {
    const dataDir = join(dir.path, 'a', 'b', 'data');
    mkdirSync(join(dir.path, 'a'));
    const station = openStation({ dataDir, stationName: 'test-bench-1', log: quiet });
    try {
      expect(station.recordsProblem()).toBeNull();
    } finally {
      station.close();
    }
  });
});
