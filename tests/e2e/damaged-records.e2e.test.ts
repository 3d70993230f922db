// Issue 8, finding 6, in the real renderer: a station whose database fails its start-up check says
// so at the top of the window, naming the file and the last backup; a unit already recorded can
// still be opened to read, and nothing more is written. The damage is made deterministic by pointing
// one index at another's pages (SQLite's integrity_check then reports the index's rows missing,
// sqlite.org/pragma.html#pragma_integrity_check), the kind of damage a read can silently miss.

import { mkdtempSync, readFileSync, rmSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import Database from 'better-sqlite3';
import { afterAll, describe, expect, it } from 'vitest';
import { openBench, POLL, type Bench } from '../harness/bench-harness.ts';
import { DATABASE_FILE, openStation } from '../../electron/services/station.ts';
import { DEMO_PROCEDURE } from '../../shared/procedures/demo-procedure.ts';
import { readingWithThd, startUnit } from '../support/station.ts';

const dataDir = mkdtempSync(join(tmpdir(), 'trimbench-damaged-e2e-'));
let bench: Bench | null = null;
afterAll(async () => {
  await bench?.close();
  rmSync(dataDir, { recursive: true, force: true });
});

const SERIAL = 'MG20-2611-0077';
const STIMULUS = { on: true, frequencyHz: DEMO_PROCEDURE.trim.stimulusHz, levelDbfs: DEMO_PROCEDURE.trim.stimulusLevelDbfs };

describe('a damaged records database in the app', () => {
  it('shows the damage with the file and the backup, opens a recorded unit to read, and records nothing', async () => {
    const station = openStation({ dataDir, stationName: 'bench-2', log: { record: () => '' } });
    const procedureId = station.records.listProcedures()[0].id;
    const { run } = startUnit(station.records, { serial: SERIAL, procedureId, operator: 'A. Tester' });
    for (const position of [0, 1]) station.records.recordTrimPoint({ runId: run.id, position, reading: readingWithThd(-40 - position), live: null, stimulus: STIMULUS });
    station.close();
    const file = join(dataDir, DATABASE_FILE);
    const db = new Database(file);
    const emptyIndex = (db.prepare("SELECT rootpage FROM sqlite_master WHERE name = 'chain_checks_by_calibration'").get() as { rootpage: number }).rootpage;
    db.unsafeMode(true);
    db.pragma('writable_schema = ON');
    db.prepare("UPDATE sqlite_master SET rootpage = ? WHERE name = 'warning_changes_by_run'").run(emptyIndex);
    db.close();
    const damaged = readFileSync(file);

    bench = await openBench({ captureWav: null, dataDir });
    const page = await bench.openApp();
    const banner = page.getByTestId('records-problem');
    await expect.poll(() => banner.textContent(), POLL).toContain(`The records database ${file} is damaged`);
    expect(await banner.textContent()).toMatch(/The last backup is .*backups.*trimbench-.*\.sqlite/);
    await page.screenshot({ path: join(tmpdir(), 'trimbench-damaged-banner.png'), fullPage: true });

    await page.getByLabel('Operator').fill('B. Tester');
    await page.getByTestId('serial-input').fill(SERIAL);
    await page.getByTestId('serial-input').press('Enter');
    await expect.poll(() => page.getByTestId('run-serial').textContent(), POLL).toBe(SERIAL);
    // The run opens at its trim (its notice was acknowledged before the damage), its recorded points readable.
    await expect.poll(() => page.getByTestId('trim-points').locator('tbody tr').count(), POLL).toBe(2);
    await page.getByTestId('finish-run').click();
    // Said where the page says why a finish failed.
    await expect.poll(() => page.getByTestId('finish-message').textContent(), POLL).toMatch(/is damaged, so Trimbench records nothing more in it/);
    // Not offered as a run that cannot pass: finishing it as FAIL could not be recorded either.
    expect(await page.getByTestId('finish-refusal').count()).toBe(0);
    await page.screenshot({ path: join(tmpdir(), 'trimbench-damaged-unit.png'), fullPage: true });

    await bench.close();
    bench = null;
    // Nothing was written to the damaged file.
    expect(readFileSync(file).equals(damaged)).toBe(true);
  }, 120_000);
});
