// Issue 8, finding 6: a damaged records database is never used as if whole. A small station file
// is damaged on purpose — bytes flipped, 4 KiB blocks overwritten (SQLite's default page size,
// sqlite.org/fileformat2.html §1.3), its header wiped, the file cut short — and reopened. Either the
// start-up check refuses it (nothing more is written, and the message names the file and the last
// backup), or each run reads back exactly as it was written, or that one run is reported as
// unreadable in words. A run that reads back different from what was written is the failure this
// test exists to catch: SQLite's checks cannot see a changed digit inside a record, so each row
// carries a CRC-32, which detects every error burst of up to 32 bits (a property of CRC codes:
// W. W. Peterson and D. T. Brown, "Cyclic Codes for Error Detection", Proc. IRE, 1961).

import { copyFileSync, cpSync, readdirSync, readFileSync, truncateSync, writeFileSync } from 'node:fs';
import { join } from 'node:path';
import Database from 'better-sqlite3';
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { dispatch } from '../../electron/services/handlers.ts';
import { DATABASE_FILE, openStation } from '../../electron/services/station.ts';
import { DEMO_PROCEDURE } from '../../shared/procedures/demo-procedure.ts';
import { seededRandom } from '../support/random.ts';
import { noCaller, readingWithThd, tempDir } from '../support/station.ts';

const STIMULUS = { on: true, frequencyHz: DEMO_PROCEDURE.trim.stimulusHz, levelDbfs: DEMO_PROCEDURE.trim.stimulusLevelDbfs };
/** Words that belong to the machinery, never to a technician's message. */
const RAW_INTERNALS = /SQLITE_|sqlite_master|JSON|at position|Unexpected token|malformed|zod|Internal error/;

let original: ReturnType<typeof tempDir>;
const written = new Map<number, string>(); // run id → its record as written, serialised
const serials = new Map<number, string>();

beforeAll(async () => {
  original = tempDir('trimbench-damage-original-');
  const station = openStation({ dataDir: original.path, stationName: 'test-bench-1' });
  const procedureId = station.records.listProcedures()[0].id;
  for (let unit = 1; unit <= 8; unit++) {
    const serial = `MG20-2611-${String(100 + unit).padStart(4, '0')}`;
    const opened = await dispatch(station.handlers, 'openRun', { serial, procedureId, operator: 'A. Tester' }, noCaller);
    if (!opened.ok) throw new Error(opened.error.message);
    const runId = (opened.value as { run: { id: number } }).run.id;
    station.records.acknowledgeNotice({ runId, stepId: 'safety' });
    for (const position of [0, 1, 2, 3]) {
      station.records.recordTrimPoint({ runId, position, reading: readingWithThd(-40 - unit - position), live: null, stimulus: STIMULUS });
    }
    if (unit % 2 === 0) {
      const finished = await dispatch(station.handlers, 'finishRun', { runId, asFailure: true }, noCaller);
      if (!finished.ok) throw new Error(finished.error.message);
    }
    serials.set(runId, serial);
  }
  for (const runId of serials.keys()) written.set(runId, JSON.stringify(station.records.getRun(runId)));
  station.close();
});
afterAll(() => original.remove());

type Damage = { name: string; apply(file: string): void };

function damages(): Damage[] {
  const random = seededRandom(20261202);
  const size = readFileSync(join(original.path, DATABASE_FILE)).length;
  const list: Damage[] = [
    { name: 'header wiped', apply: (file) => overwrite(file, 0, new Uint8Array(100)) },
    { name: 'first page zeroed', apply: (file) => overwrite(file, 0, new Uint8Array(4096)) },
    { name: 'cut to half', apply: (file) => truncateSync(file, Math.floor(size / 2 / 4096) * 4096) },
  ];
  for (let i = 0; i < 20; i++) {
    const flips = 1 + Math.floor(random() * 8);
    const offsets = Array.from({ length: flips }, () => 100 + Math.floor(random() * (size - 100)));
    const masks = offsets.map(() => 1 + Math.floor(random() * 255));
    list.push({
      name: `${flips} byte(s) flipped at ${offsets.join(', ')}`,
      apply: (file) => {
        const bytes = readFileSync(file);
        offsets.forEach((offset, k) => (bytes[offset] ^= masks[k]));
        writeFileSync(file, bytes);
      },
    });
  }
  for (let i = 0; i < 20; i++) {
    const page = 1 + Math.floor(random() * (size / 4096 - 1));
    const zeros = random() < 0.5;
    const block = new Uint8Array(4096).map(() => (zeros ? 0 : Math.floor(random() * 256)));
    list.push({ name: `page ${page + 1} overwritten with ${zeros ? 'zeros' : 'random bytes'}`, apply: (file) => overwrite(file, page * 4096, block) });
  }
  return list;
}

function overwrite(file: string, offset: number, bytes: Uint8Array): void {
  const content = readFileSync(file);
  content.set(bytes.subarray(0, Math.max(0, content.length - offset)), offset);
  writeFileSync(file, content);
}

describe('a damaged database', () => {
  it('is refused at start or read whole, run by run, in 43 damaged files: never changed silently, never raw messages', async () => {
    const outcomes = { refusedAtStart: 0, unreadableRuns: 0, runsReadWhole: 0 };
    const cases = damages();
    expect(cases).toHaveLength(43);
    for (const damage of cases) {
      const dir = tempDir('trimbench-damaged-');
      try {
        cpSync(original.path, dir.path, { recursive: true });
        const file = join(dir.path, DATABASE_FILE);
        damage.apply(file);
        const damagedBytes = readFileSync(file);
        const logged: string[] = [];
        const station = openStation({ dataDir: dir.path, stationName: 'test-bench-1', log: { record: (context) => (logged.push(context), 'E-test') } });
        try {
          const described = await dispatch(station.handlers, 'describeStation', {}, noCaller);
          if (!described.ok) throw new Error(`${damage.name}: describeStation failed`);
          const problem = (described.value as { recordsProblem: string | null }).recordsProblem;
          if (problem !== null) {
            outcomes.refusedAtStart++;
            expect(problem, damage.name).toContain(file);
            expect(problem, damage.name).not.toMatch(RAW_INTERNALS);
            expect(logged.length, damage.name).toBeGreaterThan(0);
            // A write is refused with the same words, and nothing is written.
            const procedureId = station.records.listProcedures()[0]?.id ?? 1;
            const opened = await dispatch(station.handlers, 'openRun', { serial: 'MG20-2611-0999', procedureId, operator: 'B. Tester' }, noCaller);
            expect(opened.ok, damage.name).toBe(false);
            if (!opened.ok) expect(opened.error.message, damage.name).not.toMatch(RAW_INTERNALS);
          }
          for (const [runId, serial] of serials) {
            let read: string | null = null;
            try {
              read = JSON.stringify(station.records.getRun(runId));
            } catch (error) {
              outcomes.unreadableRuns++;
              const message = (error as Error).message;
              expect((error as Error).name, `${damage.name}: ${message}`).not.toBe('Error');
              expect(message, damage.name).not.toMatch(RAW_INTERNALS);
              // Named by its run, and by serial whenever the run's own row could still be read.
              if (message.includes('cannot be read:')) expect(message, damage.name).toMatch(new RegExp(`Run ${runId}( \\(serial ${serial}\\))? cannot be read`));
              continue;
            }
            // Read back: it must be exactly what was written.
            expect(read, `${damage.name}: run ${runId} changed silently`).toBe(written.get(runId));
            outcomes.runsReadWhole++;
          }
        } finally {
          station.close();
        }
        // A refused file is left exactly as it was found, for whoever investigates it.
        if (station.recordsProblem() !== null) expect(readFileSync(file).equals(damagedBytes), damage.name).toBe(true);
      } finally {
        dir.remove();
      }
    }
    console.log(`damaged files: ${JSON.stringify(outcomes)}`);
    // The check must have had work to do on both sides.
    expect(outcomes.refusedAtStart).toBeGreaterThan(0);
    expect(outcomes.runsReadWhole).toBeGreaterThan(0);
  }, 120_000);

  it('reads a run whose rows are hidden (as a damaged index hides them) as unreadable, never as an older whole-looking run', () => {
    // Every row left is intact, so no check of a row can see what is missing; only the run as a
    // whole can. Rows are deleted here with the never-delete triggers dropped, as an index pointing
    // past them would leave them unread.
    const cases: { name: string; hide: string[] }[] = [
      { name: 'a middle point', hide: ['DELETE FROM trim_points WHERE run_id = @run AND sequence = 2'] },
      {
        name: 'the last point and the assessment made after it',
        hide: [
          'DELETE FROM trim_assessments WHERE run_id = @run AND id = (SELECT MAX(id) FROM trim_assessments WHERE run_id = @run)',
          'DELETE FROM trim_points WHERE run_id = @run AND sequence = 4',
        ],
      },
    ];
    const finishedRun = [...serials.keys()].find((id) => JSON.parse(written.get(id)!).run.finishedAt !== null)!;
    for (const { name, hide } of cases) {
      const dir = tempDir('trimbench-hidden-');
      try {
        cpSync(original.path, dir.path, { recursive: true });
        const db = new Database(join(dir.path, DATABASE_FILE));
        for (const trigger of ['trim_points_never_deleted', 'assessments_never_deleted']) db.exec(`DROP TRIGGER ${trigger}`);
        for (const statement of hide) db.prepare(statement).run({ run: finishedRun });
        db.close();
        const station = openStation({ dataDir: dir.path, stationName: 'test-bench-1', log: { record: () => '' } });
        try {
          expect(() => station.records.getRun(finishedRun), name).toThrow(new RegExp(`Run ${finishedRun} \\(serial .*\\) cannot be read`));
        } finally {
          station.close();
        }
      } finally {
        dir.remove();
      }
    }
  });

  it('names the last backup in the message when the file is found damaged', async () => {
    const dir = tempDir('trimbench-damaged-');
    try {
      cpSync(original.path, dir.path, { recursive: true });
      const file = join(dir.path, DATABASE_FILE);
      overwrite(file, 0, new Uint8Array(100));
      const station = openStation({ dataDir: dir.path, stationName: 'test-bench-1', log: { record: () => '' } });
      try {
        const problem = station.recordsProblem()!;
        expect(problem).toMatch(/last backup is .*backups.*trimbench-.*\.sqlite/);
      } finally {
        station.close();
      }
    } finally {
      dir.remove();
    }
  });

  it('reports one unreadable run and still opens the others (a changed digit inside a reading)', () => {
    // One byte of a stored reading changed: a "-4" of a level becomes "-5". The file's structure is
    // untouched, so SQLite's own check passes. Some copies of the text are stale (in pages freed
    // as the tables grew); each copy is tried, and every one that lands in a live record must make
    // exactly that record's run unreadable.
    const pristine = readFileSync(join(original.path, DATABASE_FILE));
    const needle = Buffer.from('"levelDbc":-4');
    const copies: number[] = [];
    for (let at = pristine.indexOf(needle); at >= 0; at = pristine.indexOf(needle, at + 1)) copies.push(at);
    // The newest pages first (live records sit late in a file grown by appends), at most 12 tries.
    let live = 0;
    for (const at of copies.reverse().slice(0, 12)) {
      const dir = tempDir('trimbench-damaged-');
      try {
        cpSync(original.path, dir.path, { recursive: true });
        const bytes = Buffer.from(pristine);
        bytes[at + needle.length - 1] = '5'.charCodeAt(0);
        writeFileSync(join(dir.path, DATABASE_FILE), bytes);
        const station = openStation({ dataDir: dir.path, stationName: 'test-bench-1', log: { record: () => '' } });
        try {
          expect(station.recordsProblem()).toBeNull();
          const unreadable = [...serials].filter(([runId, serial]) => {
            try {
              expect(JSON.stringify(station.records.getRun(runId))).toBe(written.get(runId));
              return false;
            } catch (error) {
              expect((error as Error).message).toContain(`(serial ${serial}) cannot be read`);
              return true;
            }
          });
          expect(unreadable.length).toBeLessThanOrEqual(1);
          live += unreadable.length;
        } finally {
          station.close();
        }
      } finally {
        dir.remove();
      }
    }
    expect(live).toBeGreaterThan(0);
  });

  it('refuses a stored value written by a newer Trimbench, naming it, without guessing', () => {
    const dir = tempDir('trimbench-damaged-');
    try {
      cpSync(original.path, dir.path, { recursive: true });
      const station = openStation({ dataDir: dir.path, stationName: 'test-bench-1', log: { record: () => '' } });
      try {
        const [runId, serial] = [...serials][0];
        const row = station.db.prepare('SELECT id, reading_json FROM trim_points WHERE run_id = ? ORDER BY sequence LIMIT 1').get(runId) as { id: number; reading_json: string };
        const newer = JSON.stringify({ v: 2, value: JSON.parse(row.reading_json).value });
        station.db.exec('DROP TRIGGER trim_points_never_change');
        station.db.prepare('UPDATE trim_points SET reading_json = ?, crc = NULL WHERE id = ?').run(newer, row.id);
        expect(() => station.records.getRun(runId)).toThrow(new RegExp(`${serial}.*written by a newer Trimbench`));
      } finally {
        station.close();
      }
    } finally {
      dir.remove();
    }
  });
});

describe('a database copied from a backup', () => {
  it('opens as the file it was copied from (the backup is a whole database)', () => {
    const dir = tempDir('trimbench-restored-');
    try {
      cpSync(original.path, dir.path, { recursive: true });
      const station = openStation({ dataDir: dir.path, stationName: 'test-bench-1', log: { record: () => '' } });
      station.close();
      // A day later: the next start takes a copy of everything recorded.
      const later = openStation({ dataDir: dir.path, stationName: 'test-bench-1', now: () => new Date(Date.now() + 25 * 3600e3), log: { record: () => '' } });
      later.close();
      const backups = readdirSorted(join(dir.path, 'backups'));
      expect(backups.length).toBe(2);
      copyFileSync(join(dir.path, 'backups', backups.at(-1)!), join(dir.path, DATABASE_FILE));
      const restored = openStation({ dataDir: dir.path, stationName: 'test-bench-1', log: { record: () => '' } });
      try {
        expect(restored.recordsProblem()).toBeNull();
        for (const [runId] of serials) expect(JSON.stringify(restored.records.getRun(runId))).toBe(written.get(runId));
      } finally {
        restored.close();
      }
    } finally {
      dir.remove();
    }
  });
});

function readdirSorted(folder: string): string[] {
  return readdirSync(folder).filter((n) => n.endsWith('.sqlite')).sort();
}

describe('the row check value', () => {
  it('survives a column added at the end of a table later (NULL in older rows), and still sees a changed value', async () => {
    const { sealRow } = await import('../../electron/services/stored-record.ts');
    // The same row before and after a migration adds a column it holds NULL in.
    expect(sealRow('runs', [1, 2, 'A. Tester'])).toBe(sealRow('runs', [1, 2, 'A. Tester', null]));
    expect(sealRow('runs', [1, 2, 'A. Tester'])).not.toBe(sealRow('runs', [1, 2, 'A. Tester', 'x']));
    expect(sealRow('runs', [1, 2, 'A. Tester'])).not.toBe(sealRow('runs', [1, 3, 'A. Tester']));
    // A NULL inside the row is still part of it: moving it changes the value.
    expect(sealRow('runs', [1, null, 'A'])).not.toBe(sealRow('runs', [null, 1, 'A']));
  });
});
