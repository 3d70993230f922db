import { afterEach, beforeEach, describe, expect, it } from 'vitest';
import { dispatch } from '../../electron/services/handlers.ts';
import { noCaller, openTestStation, readingWithThd, tempDir } from '../support/station.ts';

let dir: ReturnType<typeof tempDir>;
let station: ReturnType<typeof openTestStation>;
beforeEach(() => {
  dir = tempDir();
  station = openTestStation(dir.path);
});
afterEach(() => {
  station.close();
  dir.remove();
});

const count = (table: string) => (station.db.prepare(`SELECT COUNT(*) AS n FROM ${table}`).get() as { n: number }).n;

async function openDemoRun() {
  const procedureId = station.records.listProcedures()[0].id;
  const result = await dispatch(station.handlers, 'openRun', { serial: 'MG20-2611-0042', procedureId, operator: 'A. Tester' }, noCaller);
  if (!result.ok) throw new Error(result.error.message);
  return (result.value as { run: { id: number } }).run.id;
}

describe('IPC validation in main', () => {
  it('answers a valid request', async () => {
    const result = await dispatch(station.handlers, 'listProcedures', {}, noCaller);
    expect(result.ok).toBe(true);
  });

  it('rejects an unknown channel', async () => {
    const result = await dispatch(station.handlers, 'dropTables', {}, noCaller);
    expect(result).toEqual({ ok: false, error: { name: 'InvalidRequest', message: 'Unknown request “dropTables”.' } });
  });

  const malformedTrimPoints: [string, unknown][] = [
    ['no payload', undefined],
    ['a string', 'MG20'],
    ['missing reading', { runId: 1, position: 1 }],
    ['position as text', { runId: 1, position: '1', reading: readingWithThd(-40) }],
    ['position not finite', { runId: 1, position: Number.NaN, reading: readingWithThd(-40) }],
    ['negative run id', { runId: -1, position: 1, reading: readingWithThd(-40) }],
    ['reading without harmonics', { runId: 1, position: 1, reading: { ...readingWithThd(-40), harmonics: undefined } }],
    ['unknown flag', { runId: 1, position: 1, reading: readingWithThd(-40, { flags: ['fine' as never] }) }],
    ['extra field', { runId: 1, position: 1, reading: readingWithThd(-40), verdict: 'pass' }],
  ];
  for (const [what, payload] of malformedTrimPoints) {
    it(`rejects recordTrimPoint with ${what} and writes nothing`, async () => {
      const runId = await openDemoRun();
      const fixed = payload && typeof payload === 'object' && 'runId' in payload && payload.runId === 1 ? { ...payload, runId } : payload;
      const result = await dispatch(station.handlers, 'recordTrimPoint', fixed, noCaller);
      expect(result.ok).toBe(false);
      if (!result.ok) expect(result.error.name).toBe('InvalidRequest');
      expect(count('trim_points')).toBe(0);
    });
  }

  it('rejects a malformed serial with a message and creates no unit or run', async () => {
    const procedureId = station.records.listProcedures()[0].id;
    for (const serial of ['', 'MG20-26110042', 'XX20-2611-0042']) {
      const result = await dispatch(station.handlers, 'openRun', { serial, procedureId, operator: 'A. Tester' }, noCaller);
      expect(result.ok).toBe(false);
    }
    const bad = await dispatch(station.handlers, 'openRun', { serial: 'MG20-26110042', procedureId, operator: 'A. Tester' }, noCaller);
    expect(!bad.ok && bad.error.message).toMatch(/not a MG-20 serial number \(expected the form MG20-2611-0042\)/);
    expect(count('units')).toBe(0);
    expect(count('runs')).toBe(0);
  });

  it('rejects an empty operator name', async () => {
    const procedureId = station.records.listProcedures()[0].id;
    const result = await dispatch(station.handlers, 'openRun', { serial: 'MG20-2611-0042', procedureId, operator: '  ' }, noCaller);
    expect(!result.ok && result.error.message).toMatch(/operator/);
    expect(count('runs')).toBe(0);
  });

  it('turns a failure of the records into a message, not a throw', async () => {
    const result = await dispatch(station.handlers, 'finishRun', { runId: 999 }, noCaller);
    expect(result).toEqual({ ok: false, error: { name: 'ExpectedFailure', message: 'There is no run with id 999.' } });
  });
});
