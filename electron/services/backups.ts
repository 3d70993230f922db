// Daily copies of the records database in `backups/` beside it, taken at start once the file has
// passed its check: when a file is found damaged, the message can name a good copy to go back to.

import { closeSync, existsSync, fsyncSync, mkdirSync, openSync, readdirSync, renameSync, unlinkSync } from 'node:fs';
import { join } from 'node:path';
import type { Db } from './database.ts';
import { fsyncFolder } from './sheets.ts';

export const BACKUPS_FOLDER = 'backups';
/** A copy a day is enough to lose at most a day; a start later the same day adds none. */
const BACKUP_INTERVAL_MS = 20 * 3600 * 1000;
/** Two weeks of working days: old enough to predate damage found late, small enough to keep. */
export const BACKUPS_KEPT = 10;

const NAME = /^trimbench-(\d{4}-\d{2}-\d{2})T(\d{2})-(\d{2})-(\d{2})(?:\.\d+)?Z\.sqlite$/;

export interface Backup {
  path: string;
  takenAt: Date;
}

/** The copies in the folder, newest first; names that are not ours are ignored. */
export function listBackups(dataDir: string): Backup[] {
  const folder = join(dataDir, BACKUPS_FOLDER);
  if (!existsSync(folder)) return [];
  const found: Backup[] = [];
  for (const name of readdirSync(folder)) {
    const match = NAME.exec(name);
    if (match) found.push({ path: join(folder, name), takenAt: new Date(`${match[1]}T${match[2]}:${match[3]}:${match[4]}Z`) });
  }
  return found.sort((a, b) => b.takenAt.getTime() - a.takenAt.getTime());
}

/**
 * Copies the database unless a copy less than a day old exists, then keeps the newest few.
 * VACUUM INTO writes a consistent copy of the committed state, WAL included (sqlite.org/lang_vacuum.html);
 * it goes to a temporary name and is renamed into place, so a copy that exists is a complete one.
 */
export function takeDailyBackup(db: Db, dataDir: string, now: Date = new Date()): Backup | null {
  const newest = listBackups(dataDir)[0];
  if (newest && now.getTime() - newest.takenAt.getTime() < BACKUP_INTERVAL_MS && newest.takenAt <= now) return null;
  const folder = join(dataDir, BACKUPS_FOLDER);
  if (mkdirSync(folder, { recursive: true }) !== undefined) fsyncFolder(dataDir);
  for (const name of readdirSync(folder)) if (name.endsWith('.partial')) unlinkSync(join(folder, name));
  const path = join(folder, `trimbench-${now.toISOString().replaceAll(':', '-')}.sqlite`);
  const partial = `${path}.partial`;
  db.exec(`VACUUM INTO '${partial.replaceAll("'", "''")}'`);
  // Flushed before it is given its name: a copy that exists after a power cut is a whole one.
  const fd = openSync(partial, 'r+');
  try {
    fsyncSync(fd);
  } finally {
    closeSync(fd);
  }
  renameSync(partial, path);
  fsyncFolder(folder);
  for (const old of listBackups(dataDir).slice(BACKUPS_KEPT)) unlinkSync(old.path);
  return { path, takenAt: now };
}
