// A run names one operator, and its points carry no name of their own: a run may be continued only
// by the operator who started it, so every point stays credited to the person who recorded it
// (issue 8, finding 4: two people's points landed in one run credited to the first).

import { afterEach, beforeEach, describe, expect, it } from 'vitest';
import { dispatch } from '../../electron/services/handlers.ts';
import { DEMO_PROCEDURE } from '../../shared/procedures/demo-procedure.ts';
import { noCaller, openTestStation, readingWithThd, tempDir } from '../support/station.ts';

/** The generator at the demo procedure's stimulus, as the page reports it. */
const STIMULUS = { on: true, frequencyHz: DEMO_PROCEDURE.trim.stimulusHz, levelDbfs: DEMO_PROCEDURE.trim.stimulusLevelDbfs };
const SERIAL = 'MG20-2611-0042';

let dir: ReturnType<typeof tempDir>;
let station: ReturnType<typeof openTestStation>;
let procedureId: number;
beforeEach(() => {
  dir = tempDir();
  station = openTestStation(dir.path);
  procedureId = station.records.listProcedures()[0].id;
});
afterEach(() => {
  station.close();
  dir.remove();
});

const open = (operator: string, serial = SERIAL, retestReason?: string) =>
  dispatch(station.handlers, 'openRun', { serial, procedureId, operator, ...(retestReason ? { retestReason } : {}) }, noCaller);
const record = (runId: number, position: number, thdDb: number) =>
  dispatch(station.handlers, 'recordTrimPoint', { runId, position, reading: readingWithThd(thdDb), live: null, stimulus: STIMULUS }, noCaller);

/** Every row that says who did what: runs with their operator, and each point with its run. */
function ledger() {
  return {
    runs: station.db.prepare('SELECT id, operator, finished_at FROM runs ORDER BY id').all(),
    points: station.db.prepare('SELECT run_id, sequence FROM trim_points ORDER BY id').all(),
  };
}

async function openedRunId(operator: string, serial = SERIAL): Promise<number> {
  const result = await open(operator, serial);
  if (!result.ok) throw new Error(result.error.message);
  const runId = (result.value as { run: { id: number } }).run.id;
  // Safety first: main records no trim point before the notice is acknowledged (once per run).
  if (!station.records.getRun(runId).stepResults.some((r) => r.stepId === 'safety')) await dispatch(station.handlers, 'acknowledgeNotice', { runId, stepId: 'safety' }, noCaller);
  return runId;
}

describe('who may continue an unfinished run', () => {
  it('refuses another operator’s open of the unit, naming the run’s operator and what to do, and writes nothing', async () => {
    const runId = await openedRunId('A. Tester');
    expect(await record(runId, 0, -40)).toMatchObject({ ok: true });
    const before = ledger();

    const result = await open('B. Other');
    // Construction of the input: run `runId` was started by "A. Tester"; "B. Other" is someone else.
    expect(result.ok).toBe(false);
    if (result.ok) return;
    expect(result.error.name).toBe('ExpectedFailure');
    expect(result.error.message).toContain(`run ${runId}`);
    expect(result.error.message).toContain('A. Tester');
    expect(result.error.message).toMatch(/finish/);
    expect(ledger()).toEqual(before);
  });

  it('leaves no run open after the refusal, so the other operator cannot record into the first one’s run', async () => {
    const runId = await openedRunId('A. Tester');
    await open('B. Other');
    const before = ledger();
    const result = await record(runId, 1, -45);
    expect(result).toMatchObject({ ok: false, error: { name: 'ExpectedFailure' } });
    expect(ledger()).toEqual(before);
  });

  it('lets the same operator resume, however the name is typed (case, spaces, composed or decomposed accents)', async () => {
    const runId = await openedRunId('J. Pérez');
    // "é" as U+00E9 and as "e" + U+0301 COMBINING ACUTE ACCENT are canonically equivalent
    // (Unicode Standard Annex #15, Normalization Forms: NFC maps both to U+00E9).
    const decomposed = 'j.  pe\u0301rez';
    expect(decomposed).not.toBe('J. Pérez');
    expect(await openedRunId(decomposed)).toBe(runId);
    expect(await record(runId, 0, -40)).toMatchObject({ ok: true });
    expect(ledger().runs).toEqual([{ id: runId, operator: 'J. Pérez', finished_at: null }]);
  });

  it('after the first operator finishes, the second starts a retest credited to them, and each run holds only its own points', async () => {
    const first = await openedRunId('A. Tester');
    await record(first, 0, -40);
    await record(first, 3, -60);
    expect(await dispatch(station.handlers, 'finishRun', { runId: first, asFailure: true }, noCaller)).toMatchObject({ ok: true });

    const opened = await open('B. Other', SERIAL, 'Re-trimmed after a failed first trim');
    expect(opened.ok).toBe(true);
    if (!opened.ok) return;
    const second = opened.value as { run: { id: number; operator: string }; earlierRuns: number };
    expect(second.run.id).not.toBe(first);
    expect(second.run.operator).toBe('B. Other');
    expect(second.earlierRuns).toBe(1);
    await dispatch(station.handlers, 'acknowledgeNotice', { runId: second.run.id, stepId: 'safety' }, noCaller);
    await record(second.run.id, 0, -42);

    const { runs, points } = ledger();
    expect(runs.map((r) => (r as { operator: string }).operator)).toEqual(['A. Tester', 'B. Other']);
    expect(points).toEqual([
      { run_id: first, sequence: 1 },
      { run_id: first, sequence: 2 },
      { run_id: second.run.id, sequence: 1 },
    ]);
  });

  it('does not stop another operator from testing a different unit meanwhile', async () => {
    await openedRunId('A. Tester');
    const other = await openedRunId('B. Other', 'MG20-2611-0043');
    expect(await record(other, 0, -40)).toMatchObject({ ok: true });
  });
});
