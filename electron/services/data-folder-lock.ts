// One running station per data folder. A lock file beside the database names the process that
// holds the folder; a second station refuses to open it rather than write the same records.
// Electron's single-instance lock covers one user on one machine; this also covers a second copy
// started by another user, from another install, or over a network share.

import { closeSync, fsyncSync, linkSync, openSync, readFileSync, renameSync, unlinkSync, writeSync } from 'node:fs';
import { hostname } from 'node:os';
import { join } from 'node:path';
import { ExpectedFailure } from './expected-failure.ts';

export const LOCK_FILE = 'trimbench.lock';

export interface LockOwner {
  pid: number;
  host: string;
  since: string;
}

export interface DataFolderLock {
  readonly path: string;
  release(): void;
}

/**
 * Takes the data folder for this process or refuses with who holds it. A lock left by a process
 * that is gone (a crash, a power cut) is taken over: on this host, process.kill(pid, 0) fails with
 * ESRCH when no such process exists (POSIX kill(2), Node's process.kill docs).
 */
export function lockDataFolder(dataDir: string, { now = () => new Date() }: { now?: () => Date } = {}): DataFolderLock {
  const path = join(dataDir, LOCK_FILE);
  const me: LockOwner = { pid: process.pid, host: hostname(), since: now().toISOString() };
  // Bounded: each pass either takes the lock, refuses, or cleared a stale one (at most twice).
  for (let attempt = 0; attempt < 3; attempt++) {
    if (tryCreate(path, me)) return { path, release: () => releaseIfOurs(path, me) };
    const owner = readOwner(path);
    if (owner === 'gone') continue; // released between our attempt and the read
    if (owner === 'unreadable' || !isStale(owner)) throw heldFailure(dataDir, path, owner);
    takeAwayStale(path, owner);
  }
  throw heldFailure(dataDir, path, readOwner(path));
}

/**
 * Creates the lock file complete or not at all: the owner is written to a private file first
 * (opened 'wx', O_CREAT|O_EXCL) and fsynced, then hard-linked to the lock's name. link(2) fails
 * with EEXIST when the name exists (POSIX), so exactly one process wins, and a crash can never
 * leave an empty lock that no one could judge.
 */
function tryCreate(path: string, me: LockOwner): boolean {
  const draft = `${path}.${me.pid}.draft`;
  try {
    unlinkSync(draft);
  } catch {
    // no leftover draft of an earlier process with our pid
  }
  const fd = openSync(draft, 'wx');
  try {
    writeSync(fd, `${JSON.stringify(me)}\n`);
    fsyncSync(fd);
  } finally {
    closeSync(fd);
  }
  try {
    linkSync(draft, path);
    return true;
  } catch (error) {
    if ((error as NodeJS.ErrnoException).code === 'EEXIST') return false;
    throw error;
  } finally {
    unlinkSync(draft);
  }
}

function readOwner(path: string): LockOwner | 'gone' | 'unreadable' {
  let text: string;
  try {
    text = readFileSync(path, 'utf8');
  } catch (error) {
    if ((error as NodeJS.ErrnoException).code === 'ENOENT') return 'gone';
    return 'unreadable';
  }
  try {
    const owner = JSON.parse(text) as Partial<LockOwner>;
    if (Number.isSafeInteger(owner.pid) && (owner.pid as number) > 0 && typeof owner.host === 'string') {
      return { pid: owner.pid as number, host: owner.host, since: typeof owner.since === 'string' ? owner.since : '' };
    }
  } catch {
    // not ours to parse; judged below as unreadable
  }
  return 'unreadable';
}

/** Only a lock taken on this host can be judged: another host's pids mean nothing here. */
function isStale(owner: LockOwner): boolean {
  if (owner.host !== hostname()) return false;
  try {
    process.kill(owner.pid, 0);
    return false;
  } catch (error) {
    // EPERM: the process exists but belongs to another user; it still holds the folder.
    return (error as NodeJS.ErrnoException).code === 'ESRCH';
  }
}

/**
 * Moves the stale lock aside under a private name before deleting it, then checks that what was
 * moved is the stale owner: if another process replaced it in the meantime, its lock is put back.
 */
function takeAwayStale(path: string, stale: LockOwner): void {
  const aside = `${path}.${process.pid}.stale`;
  try {
    renameSync(path, aside);
  } catch (error) {
    if ((error as NodeJS.ErrnoException).code === 'ENOENT') return;
    throw error;
  }
  const moved = readOwner(aside);
  if (typeof moved === 'object' && (moved.pid !== stale.pid || moved.host !== stale.host || moved.since !== stale.since)) {
    try {
      linkSync(aside, path);
    } catch {
      // someone holds the name again; the next pass reads who
    }
  }
  unlinkSync(aside);
}

function releaseIfOurs(path: string, me: LockOwner): void {
  const owner = readOwner(path);
  if (typeof owner === 'object' && owner.pid === me.pid && owner.host === me.host && owner.since === me.since) {
    try {
      unlinkSync(path);
    } catch {
      // already gone: nothing to release
    }
  }
}

function heldFailure(dataDir: string, path: string, owner: LockOwner | 'gone' | 'unreadable'): ExpectedFailure {
  if (typeof owner !== 'object') {
    return new ExpectedFailure(
      `The data folder ${dataDir} is locked, but its lock file ${path} cannot be read. If no other Trimbench is running, delete that file and start again.`,
    );
  }
  const who = owner.host === hostname() ? `process ${owner.pid}` : `process ${owner.pid} on ${owner.host}`;
  const since = owner.since ? ` since ${owner.since}` : '';
  return new ExpectedFailure(
    `The data folder ${dataDir} is in use by another Trimbench (${who}${since}). Close that Trimbench and start again; if it is no longer running, delete ${path}.`,
  );
}
