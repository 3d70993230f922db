// The kill -9 loop: a child station (soak-child.ts) records trim points, finishes runs and saves
// sheets on one data folder and prints each write once it is confirmed; at a seeded random moment
// it is killed with SIGKILL, the folder is reopened (taking over the dead child's lock) and every
// write confirmed so far must still be there, in a database that passes PRAGMA integrity_check.
// A process killed after a commit returned must keep it: SQLite's commit is durable against an
// application crash in any journal mode (sqlite.org/atomiccommit.html, wal.html §"Performance
// Considerations": synchronous=NORMAL loses commits only on power loss or an OS crash).

import { spawn } from 'node:child_process';
import { existsSync, readFileSync } from 'node:fs';
import { join } from 'node:path';
import { openStation } from '../../electron/services/station.ts';
import { seededRandom } from './random.ts';

const CHILD = join(import.meta.dirname, 'soak-child.ts');

/** Serials a child incarnation uses, never reused by another: the demo's MG20-NNNN-NNNN pattern. */
export function soakSerial(incarnation: number, runIndex: number): string {
  const batch = 1000 + (incarnation % 9000);
  return `MG20-${batch}-${String(runIndex % 10000).padStart(4, '0')}`;
}

/**
 * A small but complete PDF for a serial, built by hand to ISO 32000-1: header (§7.5.2), a catalog,
 * a page tree and one empty A4 page (§7.7.2–7.7.3), a cross-reference table whose entries are
 * exactly 20 bytes (§7.5.4), the trailer and %%EOF (§7.5.5). The same serial gives the same bytes,
 * so the loop can rebuild what the child saved and compare.
 */
export function soakSheetPdf(serial: string): Uint8Array {
  const objects = [
    '<< /Type /Catalog /Pages 2 0 R >>',
    '<< /Type /Pages /Kids [3 0 R] /Count 1 >>',
    `<< /Type /Page /Parent 2 0 R /MediaBox [0 0 595 842] >>`,
  ];
  let body = `%PDF-1.4\n% soak sheet ${serial}\n`;
  const offsets: number[] = [];
  objects.forEach((object, i) => {
    offsets.push(body.length);
    body += `${i + 1} 0 obj\n${object}\nendobj\n`;
  });
  const xref = body.length;
  body += `xref\n0 ${objects.length + 1}\n0000000000 65535 f \n`;
  for (const offset of offsets) body += `${String(offset).padStart(10, '0')} 00000 n \n`;
  body += `trailer\n<< /Size ${objects.length + 1} /Root 1 0 R >>\nstartxref\n${xref}\n%%EOF\n`;
  return new TextEncoder().encode(body); // ASCII only, so string offsets are byte offsets
}

export interface SoakSummary {
  kills: number;
  confirmedPoints: number;
  lostPoints: number;
  confirmedSheets: number;
  lostSheets: number;
  integrityFailures: number;
}

export interface SoakReport extends SoakSummary {
  confirmedFinishes: number;
  lostFinishes: number;
  /** What was missing, for a failing test to show (first few). */
  problems: string[];
}

export interface SoakOptions {
  dataDir: string;
  kills: number;
  seed?: number;
  /** The kill comes at a seeded moment between 0 and this many ms after the child is ready. */
  maxKillDelayMs?: number;
  /** Called after each kill, before the check: lets a test damage the folder to see the check fail. */
  afterKill?: (kill: number, sheetPaths: string[]) => void;
}

interface Confirmed {
  points: Map<string, { runId: number; sequence: number; position: number; thdDb: number }>;
  finishes: Map<number, string>;
  sheets: Map<number, { serial: string; path: string }>;
}

/** Runs one child until it is killed; feeds each complete confirmed line into `confirmed`. */
function runChild(dataDir: string, incarnation: number, seed: number, killDelayMs: number, confirmed: Confirmed): Promise<void> {
  const child = spawn(process.execPath, ['--no-warnings', CHILD, dataDir, String(incarnation), String(seed)], {
    stdio: ['ignore', 'pipe', 'pipe'],
  });
  let pending = '';
  let errors = '';
  let killed = false;
  let timer: NodeJS.Timeout | undefined;
  const onLine = (line: string) => {
    const [kind, ...rest] = line.split(' ');
    if (kind === 'ready') {
      timer = setTimeout(() => {
        killed = true;
        child.kill('SIGKILL');
      }, killDelayMs);
    } else if (kind === 'point') {
      const [runId, sequence, position, thdDb] = rest.map(Number);
      confirmed.points.set(`${runId}/${sequence}`, { runId, sequence, position, thdDb });
    } else if (kind === 'finish') {
      confirmed.finishes.set(Number(rest[0]), rest[1]);
    } else if (kind === 'sheet') {
      confirmed.sheets.set(Number(rest[0]), { serial: rest[1], path: rest.slice(2).join(' ') });
    }
  };
  child.stdout.setEncoding('utf8');
  child.stdout.on('data', (chunk: string) => {
    pending += chunk;
    let end;
    // Only whole lines count: a line cut short by the kill was never confirmed.
    while ((end = pending.indexOf('\n')) >= 0) {
      onLine(pending.slice(0, end));
      pending = pending.slice(end + 1);
    }
  });
  child.stderr.on('data', (chunk) => (errors += chunk));
  return new Promise((resolve, reject) => {
    // 'close' comes after the process has exited and its pipes are drained, so every line it wrote is in.
    child.on('close', (code, signal) => {
      clearTimeout(timer);
      if (killed && signal === 'SIGKILL') resolve();
      else reject(new Error(`soak child ${incarnation} ended by itself (code ${code}, signal ${signal}): ${errors.trim()}`));
    });
  });
}

/** Reopens the folder as the next station would and checks everything confirmed so far. */
function verify(dataDir: string, confirmed: Confirmed, lost: { points: Set<string>; finishes: Set<number>; sheets: Set<number> }, problems: string[]): boolean {
  // Opening takes over the lock the killed child left (its pid no longer exists).
  const station = openStation({ dataDir, stationName: 'soak-check' });
  try {
    // "ok" as the single row when no problem is found (sqlite.org/pragma.html#pragma_integrity_check).
    const integrity = station.db.pragma('integrity_check') as { integrity_check: string }[];
    const intact = integrity.length === 1 && integrity[0].integrity_check === 'ok';
    if (!intact) problems.push(`integrity_check: ${integrity.map((r) => r.integrity_check).join('; ').slice(0, 300)}`);
    const runs = new Map<number, ReturnType<typeof station.records.getRun> | null>();
    const run = (id: number) => {
      if (!runs.has(id)) {
        try {
          runs.set(id, station.records.getRun(id));
        } catch (error) {
          problems.push(`run ${id} unreadable: ${error instanceof Error ? error.message : String(error)}`);
          runs.set(id, null);
        }
      }
      return runs.get(id)!;
    };
    for (const [key, point] of confirmed.points) {
      const stored = run(point.runId)?.trimPoints.find((p) => p.sequence === point.sequence);
      if (!stored || stored.position !== point.position || stored.reading.thdDb !== point.thdDb) {
        if (!lost.points.has(key)) problems.push(`point ${key} missing or changed`);
        lost.points.add(key);
      }
    }
    for (const [runId, verdict] of confirmed.finishes) {
      const stored = run(runId)?.run;
      if (!stored?.finishedAt || stored.verdict !== verdict) {
        if (!lost.finishes.has(runId)) problems.push(`finish of run ${runId} missing`);
        lost.finishes.add(runId);
      }
    }
    for (const [runId, sheet] of confirmed.sheets) {
      const stored = run(runId)?.run;
      const expected = soakSheetPdf(sheet.serial);
      const ok =
        stored?.sheetPdfPath === sheet.path && existsSync(sheet.path) && Buffer.from(expected).equals(readFileSync(sheet.path));
      if (!ok) {
        if (!lost.sheets.has(runId)) problems.push(`sheet of run ${runId} missing or not the saved bytes (${sheet.path})`);
        lost.sheets.add(runId);
      }
    }
    return intact;
  } finally {
    station.close();
  }
}

export async function runSoak({ dataDir, kills, seed = 8, maxKillDelayMs = 500, afterKill }: SoakOptions): Promise<SoakReport> {
  const random = seededRandom(seed);
  const confirmed: Confirmed = { points: new Map(), finishes: new Map(), sheets: new Map() };
  const lost = { points: new Set<string>(), finishes: new Set<number>(), sheets: new Set<number>() };
  const problems: string[] = [];
  let integrityFailures = 0;
  for (let kill = 0; kill < kills; kill++) {
    const childSeed = Math.floor(random() * 2 ** 31);
    await runChild(dataDir, kill, childSeed, Math.floor(random() * maxKillDelayMs), confirmed);
    afterKill?.(kill, [...confirmed.sheets.values()].map((sheet) => sheet.path));
    if (!verify(dataDir, confirmed, lost, problems)) integrityFailures++;
  }
  return {
    kills,
    confirmedPoints: confirmed.points.size,
    lostPoints: lost.points.size,
    confirmedSheets: confirmed.sheets.size,
    lostSheets: lost.sheets.size,
    integrityFailures,
    confirmedFinishes: confirmed.finishes.size,
    lostFinishes: lost.finishes.size,
    problems: problems.slice(0, 20),
  };
}
