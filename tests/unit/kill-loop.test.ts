// Issue 8, "Tests that keep it so": records survive kill -9. A child station records trim points,
// finishes runs and saves sheets; it is SIGKILLed at seeded random moments, and after each kill the
// folder is reopened (the dead child's lock taken over) and every write the child had confirmed
// must be there, with PRAGMA integrity_check "ok" (sqlite.org/pragma.html#pragma_integrity_check).
// What counts as confirmed is set by the child's own output, printed after each call returned,
// never by reading the database back.

import { unlinkSync } from 'node:fs';
import { afterEach, beforeEach, describe, expect, it } from 'vitest';
import { runSoak } from '../support/soak.ts';
import { tempDir } from '../support/station.ts';

let dir: ReturnType<typeof tempDir>;
beforeEach(() => (dir = tempDir('trimbench-soak-')));
afterEach(() => dir.remove());

describe('kill -9 loop', () => {
  it('loses no confirmed point, finish or sheet over 20 kills, and the database stays whole', async () => {
    const report = await runSoak({ dataDir: dir.path, kills: 20, seed: 8, maxKillDelayMs: 500 });
    expect(report.problems).toEqual([]);
    expect(report.kills).toBe(20);
    // The loop must have had something to lose: writes were confirmed before the kills.
    expect(report.confirmedPoints).toBeGreaterThan(20);
    expect(report.confirmedSheets).toBeGreaterThan(0);
    expect(report.lostPoints).toBe(0);
    expect(report.lostFinishes).toBe(0);
    expect(report.lostSheets).toBe(0);
    expect(report.integrityFailures).toBe(0);
  }, 90_000);

  it('the check itself sees a confirmed sheet that is gone', async () => {
    // A sheet file removed behind the station's back, as a power cut before the folder's fsync
    // could leave it: the loop must count it lost, or its zeros above would prove nothing.
    let removed = 0;
    // The first kill after which a sheet exists, whenever that is: a slow start (a busy machine)
    // may confirm none before the second kill.
    const report = await runSoak({
      dataDir: dir.path,
      kills: 6,
      seed: 9,
      maxKillDelayMs: 1500,
      afterKill: (_kill, sheets) => {
        if (removed === 0 && sheets.length > 0) {
          unlinkSync(sheets[0]);
          removed = 1;
        }
      },
    });
    expect(removed).toBe(1);
    expect(report.lostSheets).toBe(1);
    expect(report.lostPoints).toBe(0);
  }, 60_000);
});
