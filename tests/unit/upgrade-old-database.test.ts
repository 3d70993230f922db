// Issue 10: "old databases upgrade with their data intact (test it on a database made by the
// current release)". tests/fixtures/station-schema4/trimbench.sqlite was written by the release at
// commit 94a4812 (schema 4, the last one shipped before rows were sealed) with the script beside it
// (make.ts.txt): two demo units, trim points at 0, 1.5 and 3 turns with THD −40 − 5·position dB,
// the first finished as FAIL by A. Tester, the second left open. Those are the expected values here.

import { copyFileSync, existsSync, readdirSync } from 'node:fs';
import { join } from 'node:path';
import { fileURLToPath } from 'node:url';
import Database from 'better-sqlite3';
import { afterEach, beforeEach, describe, expect, it } from 'vitest';
import { MIGRATIONS } from '../../electron/services/database.ts';
import { openStation } from '../../electron/services/station.ts';
import { DEMO_PROCEDURE } from '../../shared/procedures/demo-procedure.ts';
import { readingWithThd, tempDir } from '../support/station.ts';

const FIXTURE = fileURLToPath(new URL('../fixtures/station-schema4/trimbench.sqlite', import.meta.url));
const STIMULUS = { on: true, frequencyHz: DEMO_PROCEDURE.trim.stimulusHz, levelDbfs: DEMO_PROCEDURE.trim.stimulusLevelDbfs };

let dir: ReturnType<typeof tempDir>;
beforeEach(() => {
  dir = tempDir('trimbench-upgrade-');
  copyFileSync(FIXTURE, join(dir.path, 'trimbench.sqlite'));
});
afterEach(() => dir.remove());

describe('a database written by the schema-4 release', () => {
  it('upgrades to today’s schema with every run, point and verdict intact, a copy kept from before', () => {
    const old = new Database(FIXTURE, { readonly: true });
    expect(old.pragma('user_version', { simple: true })).toBe(4);
    old.close();

    const station = openStation({ dataDir: dir.path, stationName: 'bench-new', log: { record: () => '' } });
    try {
      expect(station.recordsProblem()).toBeNull();
      expect(station.db.pragma('user_version', { simple: true })).toBe(MIGRATIONS.length);
      expect(station.db.pragma('integrity_check', { simple: true })).toBe('ok');
      expect(readdirSync(dir.path).some((name) => name.startsWith('trimbench.sqlite.before-schema-5-'))).toBe(true);

      const finished = station.records.lookUpUnit('MG20-2611-0501')!;
      expect(finished.runs).toHaveLength(1);
      const [first] = finished.runs;
      expect(first.run?.verdict).toBe('fail');
      expect(first.run?.operator).toBe('A. Tester');
      expect(first.run?.station).toBe('bench-old');
      const detail = station.records.getRun(first.run!.id);
      expect(detail.trimPoints.map((p) => p.position)).toEqual([0, 1.5, 3]);
      expect(detail.trimPoints.map((p) => p.reading.thdDb)).toEqual([-40, -47.5, -55]);
      expect(detail.calibration).toBeNull();
      expect(detail.run.retestOf).toBeNull();
      // Through migration 8: the old runs name no lot and no station row (their station text stays),
      // and no step has a result, so the procedure's steps are all still to run.
      expect(station.db.prepare('SELECT lot, station_id FROM runs ORDER BY id').all()).toEqual([
        { lot: null, station_id: null },
        { lot: null, station_id: null },
      ]);
      expect(detail.run.lot).toBeNull();
      expect(station.db.prepare('SELECT (SELECT COUNT(*) FROM step_results) + (SELECT COUNT(*) FROM measurements) + (SELECT COUNT(*) FROM stations) AS n').get()).toEqual({ n: 0 });
      expect(detail.stepResults).toEqual([]);

      // The open run resumes under its operator and takes a fourth point; the finished unit's retest needs a reason.
      const procedureId = station.records.listProcedures().find((p) => p.definition.code === DEMO_PROCEDURE.code)!.id;
      const open = station.records.openRun({ serial: 'MG20-2611-0502', procedureId, operator: 'A. Tester' });
      expect(open.trimPoints).toHaveLength(3);
      // An unfinished run from before walks from step 1: the demo's safety notice (schema 1 upgraded).
      expect(open.judgement.nextStepId).toBe('safety');
      station.records.recordTrimPoint({ runId: open.run.id, position: 4, reading: readingWithThd(-60), live: null, stimulus: STIMULUS });
      expect(station.records.getRun(open.run.id).trimPoints.map((p) => p.position)).toEqual([0, 1.5, 3, 4]);
      expect(() => station.records.openRun({ serial: 'MG20-2611-0501', procedureId, operator: 'A. Tester' })).toThrow(/Give the reason for the retest/);
    } finally {
      station.close();
    }
    expect(existsSync(FIXTURE)).toBe(true);
  });
});
