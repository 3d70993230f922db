import { afterEach, beforeEach, describe, expect, it } from 'vitest';
import { dispatch } from '../../electron/services/handlers.ts';
import { MAX_WARNING_CHANGES_PER_CALL, MAX_WARNING_SEEN_CHARS } from '../../shared/ipc/contract.ts';
import { DEMO_PROCEDURE } from '../../shared/procedures/demo-procedure.ts';
import { noCaller, openTestStation, readingWithThd, tempDir } from '../support/station.ts';

const STIMULUS = { on: true, frequencyHz: DEMO_PROCEDURE.trim.stimulusHz, levelDbfs: DEMO_PROCEDURE.trim.stimulusLevelDbfs };

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
    ['extra field', { runId: 1, position: 1, reading: readingWithThd(-40), stimulus: STIMULUS, verdict: 'pass' }],
    ['no stimulus', { runId: 1, position: 1, reading: readingWithThd(-40), live: null }],
    ['stimulus frequency not finite', { runId: 1, position: 1, reading: readingWithThd(-40), live: null, stimulus: { ...STIMULUS, frequencyHz: Infinity } }],
    ['stimulus frequency zero', { runId: 1, position: 1, reading: readingWithThd(-40), live: null, stimulus: { ...STIMULUS, frequencyHz: 0 } }],
    ['stimulus above full scale', { runId: 1, position: 1, reading: readingWithThd(-40), live: null, stimulus: { ...STIMULUS, levelDbfs: 3 } }],
    ['stimulus on as text', { runId: 1, position: 1, reading: readingWithThd(-40), live: null, stimulus: { ...STIMULUS, on: 'yes' } }],
    ['stimulus with an extra field', { runId: 1, position: 1, reading: readingWithThd(-40), live: null, stimulus: { ...STIMULUS, gainDb: 3 } }],
    ['an unknown unsettled choice', { runId: 1, position: 1, reading: readingWithThd(-40), live: null, stimulus: STIMULUS, unsettled: 'maybe' }],
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

  it('accepts a well-formed trim point with its stimulus', async () => {
    const runId = await openDemoRun();
    const result = await dispatch(station.handlers, 'recordTrimPoint', { runId, position: 1, reading: readingWithThd(-40), live: null, stimulus: STIMULUS }, noCaller);
    expect(result.ok).toBe(true);
    expect(count('trim_points')).toBe(1);
  });

  const change = { id: 'lf-instability', change: 'raised', position: 2, seen: 'sub-audio up 22 dB' };
  const malformedWarningChanges: [string, (runId: number) => unknown][] = [
    ['no changes', (runId) => ({ runId, changes: [] })],
    ['an unknown warning id', (runId) => ({ runId, changes: [{ ...change, id: 'smoke' }] })],
    ['an unknown change', (runId) => ({ runId, changes: [{ ...change, change: 'maybe' }] })],
    ['a position not finite', (runId) => ({ runId, changes: [{ ...change, position: Number.NaN }] })],
    ['an empty description', (runId) => ({ runId, changes: [{ ...change, seen: '' }] })],
    ['a description too long', (runId) => ({ runId, changes: [{ ...change, seen: 'x'.repeat(MAX_WARNING_SEEN_CHARS + 1) }] })],
    ['too many changes at once', (runId) => ({ runId, changes: Array.from({ length: MAX_WARNING_CHANGES_PER_CALL + 1 }, () => change) })],
    ['an extra field', (runId) => ({ runId, changes: [{ ...change, at: '2026-01-01T00:00:00Z' }] })],
  ];
  for (const [what, payload] of malformedWarningChanges) {
    it(`rejects logWarningChanges with ${what} and logs nothing`, async () => {
      const runId = await openDemoRun();
      const result = await dispatch(station.handlers, 'logWarningChanges', payload(runId), noCaller);
      expect(!result.ok && result.error.name).toBe('InvalidRequest');
      expect(count('warning_changes')).toBe(0);
    });
  }

  it('logs a well-formed batch of the largest allowed size', async () => {
    const runId = await openDemoRun();
    const changes = Array.from({ length: MAX_WARNING_CHANGES_PER_CALL }, () => ({ ...change, seen: 'x'.repeat(MAX_WARNING_SEEN_CHARS) }));
    const result = await dispatch(station.handlers, 'logWarningChanges', { runId, changes }, noCaller);
    expect(result.ok).toBe(true);
    expect(count('warning_changes')).toBe(MAX_WARNING_CHANGES_PER_CALL);
  });

  it('rejects malformed includeUnsettledPoint and finishRun requests', async () => {
    const runId = await openDemoRun();
    for (const payload of [{ runId }, { runId, pointId: 0 }, { runId, pointId: 1.5 }, { runId, pointId: '1' }, { runId, pointId: 1, extra: true }]) {
      const result = await dispatch(station.handlers, 'includeUnsettledPoint', payload, noCaller);
      expect(!result.ok && result.error.name).toBe('InvalidRequest');
    }
    for (const payload of [{ runId, asFailure: 'yes' }, { runId, asFailure: 1 }, { runId, verdict: 'pass' }]) {
      const result = await dispatch(station.handlers, 'finishRun', payload, noCaller);
      expect(!result.ok && result.error.name).toBe('InvalidRequest');
    }
    expect(count('point_confirmations')).toBe(0);
    const run = station.db.prepare('SELECT finished_at FROM runs WHERE id = ?').get(runId) as { finished_at: string | null };
    expect(run.finished_at).toBeNull();
  });

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
