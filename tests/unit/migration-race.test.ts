// Finding 3 of issue 8: two processes starting on one fresh data folder raced the migration
// ("table procedures already exists", "duplicate column name"). Each pair of child processes
// here opens the same fresh database file at the same moment; every one of them must open it.

import { spawn } from 'node:child_process';
import { join } from 'node:path';
import { pathToFileURL } from 'node:url';
import Database from 'better-sqlite3';
import { afterEach, beforeEach, describe, expect, it } from 'vitest';
import { MIGRATIONS } from '../../electron/services/database.ts';
import { tempDir } from '../support/station.ts';

const databaseModule = pathToFileURL(join(import.meta.dirname, '../../electron/services/database.ts')).href;

// The child says "ready" once Node and better-sqlite3 are loaded, then opens the file when told
// to on stdin, so both children of a pair reach openDatabase at (nearly) the same moment.
const CHILD = `
import { openDatabase } from ${JSON.stringify(databaseModule)};
process.stdout.write('ready\\n');
process.stdin.once('data', () => {
  try {
    openDatabase(process.argv[1]).close();
    process.stdout.write('opened\\n');
  } catch (error) {
    process.stdout.write('failed: ' + (error instanceof Error ? error.message : String(error)) + '\\n');
  }
  process.exit(0);
});
`;

interface Child {
  ready: Promise<void>;
  go(): void;
  outcome: Promise<string>;
}

function startChild(file: string): Child {
  const child = spawn(process.execPath, ['--input-type=module', '--no-warnings', '-e', CHILD, file], {
    stdio: ['pipe', 'pipe', 'inherit'],
  });
  let output = '';
  let markReady: () => void = () => undefined;
  const ready = new Promise<void>((resolve) => (markReady = resolve));
  child.stdout.setEncoding('utf8');
  child.stdout.on('data', (chunk: string) => {
    output += chunk;
    if (output.includes('ready\n')) markReady();
  });
  const outcome = new Promise<string>((resolve) => {
    child.on('close', (code) => {
      markReady();
      const last = output.trim().split('\n').at(-1) ?? '';
      resolve(code === 0 ? last : `exited with ${code}: ${last}`);
    });
  });
  return { ready, go: () => child.stdin.end('go\n'), outcome };
}

describe('two processes opening one fresh data folder', () => {
  let dir: ReturnType<typeof tempDir>;
  beforeEach(() => (dir = tempDir()));
  afterEach(() => dir.remove());

  it('never fails the migration, over 20 simultaneous pairs', async () => {
    const pairs = 20;
    const failures: string[] = [];
    // Four pairs at a time: enough overlap to race, few enough processes for a 2-core machine.
    for (let batch = 0; batch < pairs; batch += 4) {
      const files = Array.from({ length: Math.min(4, pairs - batch) }, (_, i) => join(dir.path, `pair-${batch + i}.sqlite`));
      const children = files.flatMap((file) => [startChild(file), startChild(file)]);
      await Promise.all(children.map((child) => child.ready));
      for (const child of children) child.go();
      for (const outcome of await Promise.all(children.map((child) => child.outcome))) {
        if (outcome !== 'opened') failures.push(outcome);
      }
      for (const file of files) {
        // Migrated exactly once, to the latest schema (SQLite's user_version pragma holds it).
        const db = new Database(file, { readonly: true });
        expect(db.pragma('user_version', { simple: true })).toBe(MIGRATIONS.length);
        db.close();
      }
    }
    expect(failures).toEqual([]);
  }, 120_000);
});
