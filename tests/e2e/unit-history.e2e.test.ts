// Issue 10, the unit view: a serial is looked up without creating anything, showing every run with
// its verdict, who and when, the final trimmer position and the sheet; a unit tested before starts a
// retest only with a reason, linked to the run it repeats — in the real renderer, by keyboard.

import { join } from 'node:path';
import { tmpdir } from 'node:os';
import { afterAll, describe, expect, it } from 'vitest';
import { openBench, POLL, type Bench } from '../harness/bench-harness.ts';
import { DEMO_PROCEDURE } from '../../shared/procedures/demo-procedure.ts';
import { readingWithThd, startUnit } from '../support/station.ts';

let bench: Bench | null = null;
afterAll(async () => {
  await bench?.close();
});

const SERIAL = 'MG20-2611-0311';
const STIMULUS = { on: true, frequencyHz: DEMO_PROCEDURE.trim.stimulusHz, levelDbfs: DEMO_PROCEDURE.trim.stimulusLevelDbfs };

describe('the unit view', () => {
  it('looks a serial up creating nothing, and starts a retest only with a reason, once on a double Enter', async () => {
    bench = await openBench({ captureWav: null });
    const { records, db } = bench.station;
    const procedureId = records.listProcedures()[0].id;
    const first = startUnit(records, { serial: SERIAL, procedureId, operator: 'A. Tester' });
    for (const position of [0, 1.5]) records.recordTrimPoint({ runId: first.run.id, position, reading: readingWithThd(-40 - position), live: null, stimulus: STIMULUS });
    records.finishRun({ runId: first.run.id, asFailure: true });
    const runCount = () => (db.prepare('SELECT COUNT(*) AS n FROM runs').get() as { n: number }).n;

    const page = await bench.openApp();
    await page.getByLabel('Operator').fill('B. Tester');
    await page.getByTestId('serial-input').fill(SERIAL);
    await page.getByTestId('look-up-unit').click();
    const history = page.getByTestId('unit-history');
    await expect.poll(() => history.textContent(), POLL).toContain(`${SERIAL} · MG-20 · 1 run`);
    expect(await history.textContent()).toMatch(/FAIL.*1\.5 \(2 points\).*A\. Tester/);
    expect(runCount()).toBe(1);
    await page.screenshot({ path: join(tmpdir(), 'trimbench-unit-history.png'), fullPage: true });

    // Enter on the serial: tested before, so the station asks why.
    await page.getByTestId('serial-input').press('Enter');
    const form = page.getByTestId('retest-reason-form');
    await expect.poll(() => form.textContent(), POLL).toContain(`was tested before: run ${first.run.id}, FAIL`);
    expect(runCount()).toBe(1);
    await page.getByTestId('retest-reason').press('Enter');
    await expect.poll(() => page.getByTestId('serial-message').textContent(), POLL).toBe('Give the reason for the retest.');
    await page.getByTestId('retest-reason').fill('Trimmer replaced after a failed first trim');
    // The impatient double Enter starts one retest.
    await page.getByTestId('retest-reason').press('Enter');
    await page.getByTestId('retest-reason').press('Enter').catch(() => {});
    await expect.poll(() => page.getByTestId('run-serial').textContent(), POLL).toBe(SERIAL);
    expect(runCount()).toBe(2);
    const retest = db.prepare('SELECT retest_of, retest_reason, operator FROM runs ORDER BY id DESC LIMIT 1').get();
    expect(retest).toEqual({ retest_of: first.run.id, retest_reason: 'Trimmer replaced after a failed first trim', operator: 'B. Tester' });
    await page.screenshot({ path: join(tmpdir(), 'trimbench-retest.png'), fullPage: true });
  }, 120_000);
});
