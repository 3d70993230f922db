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
  // Safety first: main records no trim point before the notice is acknowledged.
  await dispatch(station.handlers, 'acknowledgeNotice', { runId: (result.value as { run: { id: number } }).run.id, stepId: 'safety' }, noCaller);
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

describe('main judges only numbers it has checked (issue 8)', () => {
  const recordPoint = (runId: number, position: number, reading: unknown) =>
    dispatch(station.handlers, 'recordTrimPoint', { runId, position, reading, live: null, stimulus: STIMULUS }, noCaller);

  it('refuses H3 at −50 dBc with 0.316 % but thdDb −999, and stores nothing', async () => {
    const runId = await openDemoRun();
    // 0.316 % = 20·log10(0.00316) = −50 dB: the honest figure; −999 dB is below any physical level.
    const forged = readingWithThd(-50, { thdPercent: 0.316, thdDb: -999 });
    const result = await recordPoint(runId, 1, forged);
    expect(result.ok).toBe(false);
    expect(count('trim_points')).toBe(0);
  });

  it('judges the verdict from the stored harmonics, not the stored thdDb', async () => {
    const runId = await openDemoRun();
    // Four points on a constructed phasor line H3(p) = 0.01·(1 − p/5) + j·0.0003 (null −70.5 dBc at 5 turns).
    const onLine = (p: number) => {
      const re = 0.01 * (1 - p / 5);
      const levelDbc = 20 * Math.log10(Math.hypot(re, 0.0003));
      return readingWithThd(levelDbc, { harmonics: [{ order: 3, frequencyHz: 42, levelDbc, phaseDeg: (Math.atan2(0.0003, re) * 180) / Math.PI }] });
    };
    const live = { levelsDbfs: Array<number>(12).fill(-12), lfDbfs: Array<number>(12).fill(-110) };
    for (const p of [0, 2.5, 4, 4.5]) station.records.recordTrimPoint({ runId, position: p, reading: onLine(p), live, stimulus: STIMULUS });
    const recommended = station.records.getRun(runId).assessment!.recommendedPosition!;
    station.records.recordTrimPoint({ runId, position: recommended, reading: onLine(recommended), live, stimulus: STIMULUS });
    // A record written under older rules: the final point's H3 is −50 dBc while its thdDb says −999.
    const last = station.db.prepare('SELECT id, reading_json FROM trim_points WHERE run_id = ? ORDER BY sequence DESC LIMIT 1').get(runId) as { id: number; reading_json: string };
    const stored = JSON.parse(last.reading_json).value;
    stored.harmonics[0].levelDbc = -50;
    stored.thdDb = -999;
    // Written around the no-edit trigger, as only a record from before the checks could be.
    station.db.exec('DROP TRIGGER trim_points_never_change');
    // Stored as before values carried a version and rows a check value, so it reads as whole.
    station.db.prepare('UPDATE trim_points SET reading_json = ?, crc = NULL WHERE id = ?').run(JSON.stringify(stored), last.id);
    const result = await dispatch(station.handlers, 'finishRun', { runId }, noCaller);
    // −50 dB from the harmonic is above the demo procedure's −60 dB limit: no PASS.
    expect(result.ok && (result.value as { run: { verdict: string } }).run.verdict).not.toBe('pass');
  });

  const base = readingWithThd(-40);
  const outOfBounds: [string, unknown][] = [
    ['a sample rate below 8 kHz', { ...base, sampleRateHz: 7999 }],
    ['a sample rate above 768 kHz', { ...base, sampleRateHz: 768_001 }],
    ['a harmonic at Nyquist', { ...base, sampleRateHz: 8000, harmonics: [{ order: 3, frequencyHz: 4000, levelDbc: -40, phaseDeg: 0 }] }],
    ['a repeated harmonic order', { ...base, harmonics: [...base.harmonics, ...base.harmonics] }],
    ['a harmonic order above 64', { ...base, harmonics: [{ order: 65, frequencyHz: 910, levelDbc: -40, phaseDeg: 0 }] }],
    ['a fundamental at +7 dBFS', { ...base, fundamental: { ...base.fundamental, levelDbfs: 7 } }],
    ['H3 at +7000 dBc', { ...base, harmonics: [{ order: 3, frequencyHz: 42, levelDbc: 7000, phaseDeg: 0 }] }],
    ['a phase of −180°', { ...base, harmonics: [{ ...base.harmonics[0], phaseDeg: -180 }] }],
    ['a phase of 1e9°', { ...base, harmonics: [{ ...base.harmonics[0], phaseDeg: 1e9 }] }],
    ['thdDb of −999', { ...base, thdDb: -999 }],
    ['a repeated flag', { ...base, flags: ['at-floor', 'at-floor'] }],
    ['an extra field in the reading', { ...base, verdict: 'pass' }],
  ];
  for (const [what, reading] of outOfBounds) {
    it(`refuses a reading with ${what} before anything is written`, async () => {
      const runId = await openDemoRun();
      const result = await recordPoint(runId, 1, reading);
      expect(!result.ok && result.error.name).toBe('InvalidRequest');
      expect(count('trim_points')).toBe(0);
    });
  }

  it('refuses 10⁴ unknown long fields with a short message', async () => {
    const runId = await openDemoRun();
    const extra = Object.fromEntries(Array.from({ length: 10_000 }, (_, i) => [`${i}${'k'.repeat(1000)}`, 1]));
    const result = await recordPoint(runId, 1, { ...base, ...extra });
    expect(!result.ok && result.error.name).toBe('InvalidRequest');
    // zod quotes each unknown key by default: here 10 MB of message.
    expect(!result.ok && result.error.message.length).toBeLessThan(1000);
    expect(!result.ok && result.error.message).toMatch(/Unexpected fields .* and 9997 more/);
  });

  it('refuses 10⁵ flags with a short message', async () => {
    const runId = await openDemoRun();
    const result = await recordPoint(runId, 1, { ...base, flags: Array(100_000).fill('nonsense') });
    expect(!result.ok && result.error.name).toBe('InvalidRequest');
    // A message a person can read: a few lines, not one per item (the finding: 97 MB).
    expect(!result.ok && result.error.message.length).toBeLessThan(1000);
    expect(count('trim_points')).toBe(0);
  });

  // Unicode: Cc controls (NUL U+0000, ESC U+001B), bidi override U+202E, zero-width space U+200B (UAX #9, Unicode ch. 23).
  for (const [what, operator] of [
    ['NUL', 'A.\u0000Tester'],
    ['an ESC sequence', '\u001b[31mA. Tester'],
    ['a bidi override', 'A. \u202eretseT'],
    ['only zero-width characters', '\u200b\u200b\u2060'],
    ['only a no-break space and a zero-width space', '\u00a0\u200b'],
  ] as const) {
    it(`refuses an operator name with ${what}, naming the field`, async () => {
      const procedureId = station.records.listProcedures()[0].id;
      const result = await dispatch(station.handlers, 'openRun', { serial: 'MG20-2611-0042', procedureId, operator }, noCaller);
      expect(!result.ok && result.error.message).toMatch(/operator name/);
      expect(count('runs')).toBe(0);
    });
  }

  it('acts only on the run the station has open', async () => {
    const first = await openDemoRun();
    const procedureId = station.records.listProcedures()[0].id;
    const other = await dispatch(station.handlers, 'openRun', { serial: 'MG20-2611-0043', procedureId, operator: 'A. Tester' }, noCaller);
    expect(other.ok).toBe(true);
    const finished = await dispatch(station.handlers, 'finishRun', { runId: first, asFailure: true }, noCaller);
    expect(!finished.ok && finished.error.message).toMatch(/not the run open at this station/);
    const point = await recordPoint(first, 1, base);
    expect(!point.ok && point.error.message).toMatch(/not the run open at this station/);
    expect(count('trim_points')).toBe(0);
    expect((station.db.prepare('SELECT COUNT(*) AS n FROM runs WHERE finished_at IS NOT NULL').get() as { n: number }).n).toBe(0);
  });

  it('refuses a warm re-check with no finite result, stores nothing, and the run still opens and finishes', async () => {
    const runId = await openDemoRun();
    station.records.recordTrimPoint({ runId, position: 0, reading: readingWithThd(-40), live: null, stimulus: STIMULUS });
    station.records.recordTrimPoint({ runId, position: 4, reading: readingWithThd(-62), live: null, stimulus: STIMULUS });
    // 1e308° in radians overflows a double (max ≈ 1.8e308, IEEE 754), and cos(Infinity) is NaN (ECMA-262 Math.cos).
    const huge = readingWithThd(-62, { harmonics: [{ order: 3, frequencyHz: 42, levelDbc: -62, phaseDeg: 1e308 }] });
    expect(() =>
      station.records.recordWarmCheck({ runId, coldTemperatureC: 22, warmTemperatureC: 42, reading: huge, stimulus: STIMULUS }),
    ).toThrow(/nothing was stored/);
    expect(count('warm_checks')).toBe(0);
    const reopened = await dispatch(station.handlers, 'openRun', { serial: 'MG20-2611-0042', procedureId: station.records.listProcedures()[0].id, operator: 'A. Tester' }, noCaller);
    expect(reopened.ok).toBe(true);
    const finished = await dispatch(station.handlers, 'finishRun', { runId, asFailure: true }, noCaller);
    expect(finished.ok).toBe(true);
  });

  it('does not commit a verdict when what it stores does not validate', async () => {
    const runId = await openDemoRun();
    station.records.recordTrimPoint({ runId, position: 0, reading: readingWithThd(-40), live: null, stimulus: STIMULUS });
    // A warm re-check row whose drift is not a number (JSON writes Infinity as null, ECMA-262 JSON.stringify).
    station.db
      .prepare('INSERT INTO warm_checks (run_id, recorded_at, position, cold_temperature_c, warm_temperature_c, reading_json, result_json) VALUES (?, ?, ?, ?, ?, ?, ?)')
      .run(runId, '2026-01-01T00:00:00Z', 0, 22, 42, '{}', JSON.stringify({ recordedAt: 'x', position: 0, coldTemperatureC: 22, warmTemperatureC: 42, coldLevelDbc: -40, warmLevelDbc: 7000, trackingFraction: 0, measuredDrift: Infinity, untrackedDrift: 0 }));
    const result = await dispatch(station.handlers, 'finishRun', { runId, asFailure: true }, noCaller);
    expect(result.ok).toBe(false);
    const run = station.db.prepare('SELECT finished_at, verdict FROM runs WHERE id = ?').get(runId) as { finished_at: string | null; verdict: string | null };
    expect(run).toEqual({ finished_at: null, verdict: null });
  });
});
