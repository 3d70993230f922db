// Main's side of the ringing step: attachScopeCapture through the dispatcher with main's file dialog
// stubbed (the CallerContext the app gives it). Main reads the file itself, judges it against the
// stored revision's limits, and stores the measurements with their limits and the record; a file it
// cannot read or judge is refused with one plain message naming the file, and nothing is stored.
// Records are the textbook second-order system's square-wave response (Ogata; tests/support).

import { execFileSync } from 'node:child_process';
import { symlinkSync, writeFileSync } from 'node:fs';
import { join } from 'node:path';
import { afterEach, beforeEach, describe, expect, it } from 'vitest';
import { dispatch, type CallerContext } from '../../electron/services/handlers.ts';
import { openStation } from '../../electron/services/station.ts';
import type { RunDetail } from '../../shared/ipc/contract.ts';
import { buildSheetModel } from '../../shared/sheet/sheet-model.ts';
import { noCaller, onPhasorLine, STEADY_LIVE, tempDir } from '../support/station.ts';
import { ringingProcedureFile, scopeRecordText } from '../support/ringing-procedure.ts';
import { textbookOvershoot, textbookRingHz } from '../support/step-response.ts';

let dir: ReturnType<typeof tempDir>;
let station: ReturnType<typeof openStation>;
let runId: number;

const choosing = (path: string | null): CallerContext => ({ ...noCaller, chooseScopeCapture: async () => path });
const attach = (path: string | null) => dispatch(station.handlers, 'attachScopeCapture', { runId, stepId: 'ringing-20k' }, choosing(path));
const ringingResults = () => (station.records.getRun(runId) as RunDetail).stepResults.filter((r) => r.stepId === 'ringing-20k');
const write = (name: string, text: string) => {
  const path = join(dir.path, name);
  writeFileSync(path, text);
  return path;
};

beforeEach(async () => {
  dir = tempDir('trimbench-ringing-');
  station = openStation({ dataDir: dir.path, stationName: 'bench-7', log: { record: () => '' } });
  const path = ringingProcedureFile(dir.path);
  const imported = await dispatch(station.handlers, 'importProcedure', {}, { ...noCaller, chooseProcedureFile: async () => path });
  if (!imported.ok) throw new Error(imported.error.message);
  const opened = await dispatch(station.handlers, 'openRun', { serial: 'MG20-2611-0042', procedureId: (imported.value as { id: number }).id, operator: 'A. Tester' }, noCaller);
  if (!opened.ok) throw new Error(opened.error.message);
  runId = (opened.value as RunDetail).run.id;
  station.records.acknowledgeNotice({ runId, stepId: 'safety' });
});
afterEach(() => {
  station.close();
  dir.remove();
});

describe('attachScopeCapture', () => {
  it('judges a good record in main and stores the measurements with their limits, the file name and the plotted edge; the sheet shows them', async () => {
    const system = { zeta: 0.45, naturalHz: 300e3 };
    const result = await attach(write('unit-0042 ringing.csv', scopeRecordText(system, 20e3)));
    expect(result.ok).toBe(true);
    const [stored] = ringingResults();
    expect(stored.verdict).toBe('pass');
    const byQuantity = Object.fromEntries(stored.measurements.map((m) => [m.quantity, m]));
    expect(Math.abs(byQuantity.ringFrequencyHz.value! / textbookRingHz(system) - 1)).toBeLessThan(0.01);
    expect(Math.abs(byQuantity.overshootPercent.value! - 100 * textbookOvershoot(system.zeta))).toBeLessThan(1);
    expect(byQuantity.dampingRatio).toMatchObject({ low: 0.3, high: null, unit: 'ratio', verdict: 'pass' });
    expect(stored.scopeRecord).toMatchObject({ fileName: 'unit-0042 ringing.csv', channel: 0, channelName: 'CH1' });
    expect(stored.scopeRecord!.plot.envelope).not.toBeNull();
    // Read back from the database, the record is the same (sealed rows, re-judged on reading).
    const detail = station.records.getRun(runId);
    const sheet = buildSheetModel(detail);
    const row = sheet.steps.find((s) => s.id === 'ringing-20k')!;
    expect(row.conditions).toMatch(/^square wave 20 kHz at −10\.0 dBFS; oscilloscope record, voltage column 0; record “unit-0042 ringing\.csv”, \d+ edges$/);
    expect(row.statusText).toMatch(/pass/i);
    expect(row.measurements.map((m) => m.label)).toEqual(['Ringing frequency', 'Damping ratio', 'Overshoot', 'Settling time']);
    expect(row.measurements.find((m) => m.label === 'Settling time')!.limitText).toBe('≤ 20.00 µs');
  });

  it('refuses a file it cannot read, naming the file and the problem, and stores nothing', async () => {
    const notCsv = await attach(write('photo.csv', 'this is not,a record\nat,all\n'));
    expect(notCsv).toMatchObject({ ok: false });
    expect(!notCsv.ok && notCsv.error.message).toMatch(/^Step “ringing-20k” was not recorded\. photo\.csv cannot be read: no row of numbers/);
    const missing = await attach(join(dir.path, 'gone.csv'));
    expect(!missing.ok && missing.error.message).toMatch(/gone\.csv cannot be read \(ENOENT\)/);
    expect(ringingResults()).toEqual([]);
  });

  it('refuses a record of another square wave (10 kHz for the step’s 20 kHz), storing nothing', async () => {
    const result = await attach(write('wrong.csv', scopeRecordText({ zeta: 0.45, naturalHz: 300e3 }, 10e3)));
    expect(!result.ok && result.error.message).toMatch(/wrong\.csv records a square wave of 10(\.00)? kHz, not the step's 20 kHz/);
    expect(ringingResults()).toEqual([]);
  });

  it('stores an overdamped record (no ringing) as a result: its ring-frequency and damping limits are not met', async () => {
    // fn = 1 MHz: the unit's own edge is fast enough for the step (shared/procedures/ringing.ts).
    const result = await attach(write('flat.csv', scopeRecordText({ zeta: 1.5, naturalHz: 1e6 }, 20e3)));
    expect(result.ok).toBe(true);
    const [stored] = ringingResults();
    expect(stored.verdict).toBe('fail');
    expect(stored.scopeRecord!.flags).toContain('no-ringing');
    expect(stored.measurements.find((m) => m.quantity === 'ringFrequencyHz')).toMatchObject({ value: null, verdict: 'fail' });
    expect(stored.reasons.join(' ')).toMatch(/Ringing frequency was not measured/);
  });

  it('stores a record whose channel name is longer than a stored record keeps, cut, and the run reads back', async () => {
    const text = scopeRecordText({ zeta: 0.45, naturalHz: 300e3 }, 20e3).replace('TIME,CH1', `TIME,CH1 ${'x'.repeat(250)}`);
    const result = await attach(write('long.csv', text));
    expect(result.ok && (result.value as { outcome: string }).outcome).toBe('recorded');
    const [stored] = ringingResults();
    expect(stored.scopeRecord!.channelName).toMatch(/^CH1 x+…$/);
    expect(stored.scopeRecord!.channelName.length).toBeLessThanOrEqual(200);
    expect((await dispatch(station.handlers, 'finishRun', { runId, asFailure: true }, noCaller)).ok).toBe(true);
  });

  it('refuses a symbolic link to /dev/zero (a device, endless) without reading it', { timeout: 10_000 }, async (context) => {
    if (process.platform === 'win32') return context.skip();
    const path = join(dir.path, 'zero.csv');
    symlinkSync('/dev/zero', path);
    const result = await attach(path);
    expect(!result.ok && result.error.message).toMatch(/zero\.csv is not a regular file/);
    expect(ringingResults()).toEqual([]);
  });

  it('refuses a named pipe (FIFO) without waiting for a writer', { timeout: 10_000 }, async (context) => {
    if (process.platform === 'win32') return context.skip();
    const path = join(dir.path, 'pipe.csv');
    execFileSync('mkfifo', [path]);
    const result = await attach(path);
    expect(!result.ok && result.error.message).toMatch(/pipe\.csv is not a regular file/);
    expect(ringingResults()).toEqual([]);
  });

  it('a cancelled dialog records nothing; a caller with no dialog is refused in words', async () => {
    const cancelled = await attach(null);
    expect(cancelled.ok && (cancelled.value as { outcome: string }).outcome).toBe('cancelled');
    expect(ringingResults()).toEqual([]);
    const headless = await dispatch(station.handlers, 'attachScopeCapture', { runId, stepId: 'ringing-20k' }, noCaller);
    expect(!headless.ok && headless.error.message).toMatch(/attached from the Trimbench window/);
  });

  it('main never records a trim point read with a square wave playing: the meter reads sines', async () => {
    expect((await attach(write('ok.csv', scopeRecordText({ zeta: 0.45, naturalHz: 300e3 }, 20e3)))).ok).toBe(true);
    const stimulus = { on: true, frequencyHz: 14, levelDbfs: -12 };
    const point = (waveform: 'sine' | 'square') =>
      dispatch(station.handlers, 'recordTrimPoint', { runId, position: 0, reading: onPhasorLine(0, 5), live: STEADY_LIVE, stimulus: { ...stimulus, waveform } }, noCaller);
    const square = await point('square');
    expect(!square.ok && square.error.message).toMatch(/square wave: this measurement needs a sine/);
    expect((await point('sine')).ok).toBe(true);
  });

  it('the check step channel refuses the ringing step, and the ringing channel refuses a check step', async () => {
    const asCheck = await dispatch(station.handlers, 'recordCheckStep', { runId, stepId: 'ringing-20k', stimulus: { on: true, frequencyHz: 20000, levelDbfs: -10 }, readings: [] }, noCaller);
    expect(asCheck.ok).toBe(false);
    const result = await dispatch(station.handlers, 'attachScopeCapture', { runId, stepId: 'lf-trim' }, choosing(write('x.csv', scopeRecordText({ zeta: 0.45, naturalHz: 300e3 }, 20e3))));
    expect(!result.ok && result.error.message).toMatch(/is a trim step, not a ringing step/);
  });
});
