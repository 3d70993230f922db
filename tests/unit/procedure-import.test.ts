// Issue 10, "Procedures as files the line owns": importing a procedure file through main. The
// rules come from the issue and docs/procedures.md: a file is checked whole before anything is
// stored; importing a changed procedure under the same code makes a new revision (the file names
// it); a stored revision never changes; the same file again changes nothing; every run names the
// revision it used; new runs use the newest revision.

import { readFileSync, writeFileSync } from 'node:fs';
import { join } from 'node:path';
import { fileURLToPath } from 'node:url';
import { afterEach, beforeEach, describe, expect, it } from 'vitest';
import { dispatch, type CallerContext } from '../../electron/services/handlers.ts';
import { openStation } from '../../electron/services/station.ts';
import type { ProcedureRevision } from '../../shared/ipc/contract.ts';
import { noCaller, tempDir, startUnit, TEST_SETUP } from '../support/station.ts';
import { sealRow } from '../../electron/services/stored-record.ts';
import { DEMO_PROCEDURE } from '../../shared/procedures/demo-procedure.ts';

const RESOURCE = fileURLToPath(new URL('../../resources/procedures/mg20-lf-trim.json', import.meta.url));

let dir: ReturnType<typeof tempDir>;
let station: ReturnType<typeof openStation>;
beforeEach(() => {
  dir = tempDir('trimbench-import-');
  station = openStation({ dataDir: join(dir.path, 'data'), stationName: 'bench-1', log: { record: () => '' } });
});
afterEach(() => {
  station.close();
  dir.remove();
});

const choosing = (path: string | null): CallerContext => ({ ...noCaller, chooseProcedureFile: async () => path });
async function importFile(path: string | null) {
  return dispatch(station.handlers, 'importProcedure', {}, choosing(path));
}
/** The demo file with its notices and trim only: what this version can run whole. */
function trimOnly(file: Record<string, any>): void {
  file.steps = file.steps.filter((s: { kind: string }) => s.kind === 'notice' || s.kind === 'trim');
}
function variant(name: string, change: (file: Record<string, any>) => void): string {
  const file = JSON.parse(readFileSync(RESOURCE, 'utf8'));
  trimOnly(file);
  change(file);
  const path = join(dir.path, name);
  writeFileSync(path, JSON.stringify(file, null, 2));
  return path;
}
const procedureRows = () => (station.db.prepare('SELECT COUNT(*) AS n FROM procedures').get() as { n: number }).n;

describe('the built-in procedure', () => {
  it('is stored once, and a stored revision of the same code and revision with other content is refused, never used silently', async () => {
    const stored = station.records.listProcedures().find((p) => p.definition.code === DEMO_PROCEDURE.code)!;
    expect(station.records.ensureProcedure(DEMO_PROCEDURE)).toBe(stored.id);
    const changed = { ...DEMO_PROCEDURE, trim: { ...DEMO_PROCEDURE.trim, limitThdDb: -55 } };
    expect(() => station.records.ensureProcedure(changed)).toThrow(/MG20-LF-TRIM revision B differs from the one stored under that revision/);

    // Records whose revision B says −55 dB (as if another build had stored it), sealed as written: the station reads, and records nothing.
    const row = station.db.prepare('SELECT id, code, revision FROM procedures WHERE id = ?').get(stored.id) as { id: number; code: string; revision: string };
    const definition_json = JSON.stringify({ v: 1, value: changed });
    station.db.exec('DROP TRIGGER procedures_never_change');
    station.db.prepare('UPDATE procedures SET definition_json = ?, crc = ? WHERE id = ?').run(definition_json, sealRow('procedures', [row.code, row.revision, definition_json]), row.id);
    station.close();
    station = openStation({ dataDir: join(dir.path, 'data'), stationName: 'bench-1', log: { record: () => '' } });
    expect(station.recordsProblem()).toMatch(/MG20-LF-TRIM revision B differs/);
    const open = await dispatch(station.handlers, 'openRun', { serial: 'MG20-2611-0042', procedureId: stored.id, operator: 'A. Tester' }, noCaller);
    expect(!open.ok && open.error.message).toMatch(/differs/);
  });
});

describe('importing a procedure file', () => {
  it('stores the demo file with its check steps whole: the run walks them (issue 10: "a run walks the procedure\'s steps in order")', async () => {
    const imported = await importFile(RESOURCE);
    expect(imported).toMatchObject({ ok: true, value: { outcome: 'stored', code: 'MG20-LF-TRIM', revision: 'E' } });
    const stored = station.db.prepare("SELECT definition_json FROM procedures WHERE code = 'MG20-LF-TRIM' AND revision = 'E'").get() as { definition_json: string };
    // Every step of the file, in its order, check steps included (the file itself is the expectation).
    const file = JSON.parse(readFileSync(RESOURCE, 'utf8'));
    expect(JSON.parse(stored.definition_json).value.steps.map((s: { id: string; kind: string }) => [s.id, s.kind])).toEqual(
      file.steps.map((s: { id: string; kind: string }) => [s.id, s.kind]),
    );
  });

  it('stores the demo file (notices and trim) as its revision, which new runs then use and name', async () => {
    const imported = await importFile(variant('trim-only.json', () => {}));
    expect(imported).toMatchObject({ ok: true, value: { outcome: 'stored', code: 'MG20-LF-TRIM', revision: 'E' } });
    const newest = station.records.listProcedures().find((p) => p.definition.code === 'MG20-LF-TRIM')!;
    expect(newest.definition.revision).toBe('E');
    // The trim view: the file's trim step, safety notice first among the instructions.
    const file = JSON.parse(readFileSync(RESOURCE, 'utf8'));
    const trimStep = file.steps.find((s: { kind: string }) => s.kind === 'trim');
    const notice = file.steps.find((s: { kind: string }) => s.kind === 'notice');
    expect(newest.definition.trim.stimulusHz).toBe(trimStep.stimulusHz);
    expect(newest.definition.trim.limitThdDb).toBe(trimStep.limitThdDb);
    expect(newest.definition.trim.instructions[0]).toBe(notice.instructions[0]);
    // The file requires a calibrated station (its dBu checks); with one it starts and names revision E.
    const open = await dispatch(station.handlers, 'openRun', { serial: 'MG20-2611-0042', procedureId: newest.id, operator: 'A. Tester' }, noCaller);
    expect(!open.ok && open.error.message).toMatch(/requires a calibrated station/);
  });

  it('changes nothing for the same file again, and refuses a changed file under a stored revision', async () => {
    const same = variant('trim-only.json', () => {});
    await importFile(same);
    const rows = procedureRows();
    expect(await importFile(same)).toMatchObject({ ok: true, value: { outcome: 'unchanged', revision: 'E' } });
    const changed = variant('changed.json', (file) => {
      file.steps.find((s: { kind: string }) => s.kind === 'trim').limitThdDb = -55;
    });
    const refused = await importFile(changed);
    expect(!refused.ok && refused.error.message).toMatch(/MG20-LF-TRIM revision E is already stored with other content.*new revision/);
    expect(procedureRows()).toBe(rows);
    // Given its own revision, the changed file is stored beside the old one, which stays as it was.
    const revised = variant('revised.json', (file) => {
      file.revision = 'F';
      file.steps.find((s: { kind: string }) => s.kind === 'trim').limitThdDb = -55;
    });
    expect(await importFile(revised)).toMatchObject({ ok: true, value: { outcome: 'stored', revision: 'F' } });
    expect(procedureRows()).toBe(rows + 1);
    const list = station.records.listProcedures().filter((p) => p.definition.code === 'MG20-LF-TRIM');
    expect(list.map((p) => [p.definition.revision, p.definition.trim.limitThdDb])).toEqual([['F', -55]]);
  });

  it('refuses a file with problems, naming each with its place in the file, and stores nothing', async () => {
    const rows = procedureRows();
    const broken = variant('broken.json', (file) => {
      file.steps[0].title = 42;
      file.serial.example = 'not-a-serial';
    });
    const refused = await importFile(broken);
    expect(refused.ok).toBe(false);
    if (!refused.ok) {
      expect(refused.error.message).toContain('broken.json was not imported');
      expect(refused.error.message).toMatch(/steps\[0\]\.title/);
      expect(refused.error.message).toMatch(/serial/);
    }
    expect(procedureRows()).toBe(rows);
  });

  it('refuses a procedure without a trim step, a file far too large, and answers a cancelled dialog with nothing', async () => {
    const noTrim = variant('no-trim.json', (file) => {
      file.steps = file.steps.filter((s: { kind: string }) => s.kind !== 'trim');
    });
    const refused = await importFile(noTrim);
    expect(!refused.ok && refused.error.message).toMatch(/has none|trim/);
    const huge = join(dir.path, 'huge.json');
    writeFileSync(huge, `{"pad": "${'x'.repeat(600 * 1024)}"}`);
    const tooBig = await importFile(huge);
    expect(!tooBig.ok && tooBig.error.message).toMatch(/too large for a procedure file/);
    expect(await importFile(null)).toMatchObject({ ok: true, value: { outcome: 'cancelled' } });
  });
});

describe('a run and its revision', () => {
  it('carries the procedure revision it uses, also once a newer revision is stored', async () => {
    const builtIn = station.records.listProcedures()[0];
    const open = startUnit(station.records, { serial: 'MG20-2611-0042', procedureId: builtIn.id, operator: 'A. Tester' });
    expect(open.procedure.revision).toBe(builtIn.definition.revision);
    const revised = variant('revised.json', (file) => {
      file.revision = 'D';
      file.requiresCalibration = false;
    });
    expect(await importFile(revised)).toMatchObject({ ok: true, value: { outcome: 'stored', revision: 'D' } });
    // The open run keeps its revision (B), and its detail says so, though new runs would use D.
    const resumed = startUnit(station.records, { serial: 'MG20-2611-0042', procedureId: builtIn.id, operator: 'A. Tester' });
    expect(resumed.run.id).toBe(open.run.id);
    expect(resumed.procedure.revision).toBe(builtIn.definition.revision);
    expect(station.records.listProcedures().map((p) => p.definition.revision)).toEqual(['D']);
  });
});

describe('the demo file’s revision E after D', () => {
  it('a run opened under revision D (the checks without the sweep, max-level and ringing steps) keeps D and its steps; new runs use E with the three new steps (docs/procedures.md, Revisions)', async () => {
    // Revision D as it was: the file's steps up to the hum check. Both require a calibrated station.
    const calibrated = await dispatch(station.handlers, 'recordCalibration', {
      operator: 'A. Tester',
      setup: TEST_SETUP,
      output: { referenceHz: 1000, referenceDbfs: -20, meterEntry: '0.7746 V' },
      input: { method: 'loopback', generatorDbfs: -20, capturedDbfs: -20, capturedHz: 1000 },
    }, noCaller);
    if (!calibrated.ok) throw new Error(calibrated.error.message);
    const d = join(dir.path, 'rev-d.json');
    const file = JSON.parse(readFileSync(RESOURCE, 'utf8'));
    const newKinds = ['response', 'max-level', 'ringing'];
    writeFileSync(d, JSON.stringify({ ...file, revision: 'D', steps: file.steps.filter((s: { kind: string }) => !newKinds.includes(s.kind)) }));
    expect(await importFile(d)).toMatchObject({ ok: true, value: { outcome: 'stored', revision: 'D' } });
    const underD = station.records.listProcedures().find((p) => p.definition.code === 'MG20-LF-TRIM')!;
    const open = startUnit(station.records, { serial: 'MG20-2611-0042', procedureId: underD.id, operator: 'A. Tester', setup: TEST_SETUP });
    expect(await importFile(RESOURCE)).toMatchObject({ ok: true, value: { outcome: 'stored', revision: 'E' } });
    const newest = station.records.listProcedures().find((p) => p.definition.code === 'MG20-LF-TRIM')!;
    expect(newest.definition.revision).toBe('E');
    // The open run resumes on D, and walks D's steps: none of the new ones.
    const resumed = startUnit(station.records, { serial: 'MG20-2611-0042', procedureId: newest.id, operator: 'A. Tester', setup: TEST_SETUP });
    expect(resumed.run.id).toBe(open.run.id);
    expect(resumed.procedure.revision).toBe('D');
    expect(resumed.procedureFile.steps.map((s) => s.kind).filter((k) => newKinds.includes(k))).toEqual([]);
    const answer = await dispatch(station.handlers, 'listProcedureRevisions', {}, noCaller);
    if (!answer.ok) throw new Error(answer.error.message);
    const e = (answer.value as ProcedureRevision[]).find((r) => r.revision === 'E')!;
    expect(e.current).toBe(true);
    expect(e.file.steps.slice(-3).map((s) => s.kind)).toEqual(newKinds);
  });
});

describe('revisions go forward', () => {
  it('refuses an older revision than the one new runs use (A after D), naming both', async () => {
    expect(await importFile(variant('d.json', (f) => ((f.revision = 'D'), (f.requiresCalibration = false))))).toMatchObject({ ok: true });
    const older = await importFile(variant('a.json', (f) => ((f.revision = 'A'), (f.requiresCalibration = false))));
    expect(!older.ok && older.error.message).toMatch(/revision A of MG20-LF-TRIM is not after revision D/);
    // Numbers in revision labels count as numbers: 10 comes after 9 (a plain text order would put it before).
    expect(await importFile(variant('9.json', (f) => ((f.code = 'MG20-NUM'), (f.revision = '9'))))).toMatchObject({ ok: true });
    expect(await importFile(variant('10.json', (f) => ((f.code = 'MG20-NUM'), (f.revision = '10'))))).toMatchObject({ ok: true, value: { outcome: 'stored' } });
  });

  it('resumes an unfinished run on its own revision after a newer one is imported: no second run starts beside it', async () => {
    const builtIn = station.records.listProcedures()[0];
    const open = startUnit(station.records, { serial: 'MG20-2611-0042', procedureId: builtIn.id, operator: 'A. Tester' });
    await importFile(variant('d.json', (f) => ((f.revision = 'D'), (f.requiresCalibration = false))));
    const newest = station.records.listProcedures()[0];
    expect(newest.definition.revision).toBe('D');
    // The page offers only D now; opening the serial under it finds the open run on B.
    const again = startUnit(station.records, { serial: 'MG20-2611-0042', procedureId: newest.id, operator: 'A. Tester' });
    expect(again.run.id).toBe(open.run.id);
    expect(again.procedure.revision).toBe(builtIn.definition.revision);
    expect(() => startUnit(station.records, { serial: 'MG20-2611-0042', procedureId: newest.id, operator: 'B. Other' })).toThrow(/Only A\. Tester can continue it/);
  });
});

describe('the stored revisions, listed whole', () => {
  it('lists every revision of a procedure, each with its steps and limits and the runs that name it (a stored revision never changes)', async () => {
    const builtIn = station.records.listProcedures()[0];
    startUnit(station.records, { serial: 'MG20-2611-0042', procedureId: builtIn.id, operator: 'A. Tester' });
    const path = variant('revised.json', (file) => {
      file.revision = 'D';
      file.requiresCalibration = false;
    });
    expect(await importFile(path)).toMatchObject({ ok: true });
    const answer = await dispatch(station.handlers, 'listProcedureRevisions', {}, noCaller);
    if (!answer.ok) throw new Error(answer.error.message);
    const listed = { value: answer.value as ProcedureRevision[] };
    expect(listed.value.map((r) => [r.code, r.revision, r.current, r.runs])).toEqual([
      ['MG20-LF-TRIM', builtIn.definition.revision, false, 1],
      ['MG20-LF-TRIM', 'D', true, 0],
    ]);
    // Revision D exactly as the file the line wrote.
    expect(listed.value[1].file).toEqual(JSON.parse(readFileSync(path, 'utf8')));
    // The built-in schema-1 revision as docs/procedures.md describes its upgrade: a safety notice, then the trim step.
    expect(listed.value[0].file.steps.map((s) => s.kind)).toEqual(['notice', 'trim']);
    expect(listed.value[0].modelCode).toBe('MG-20');
  });
});
