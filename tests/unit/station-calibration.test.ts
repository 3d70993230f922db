// Issue 9, main side: station settings in a versioned file, calibrations computed in main from what
// was typed and captured, chain checks re-derived and judged, and a procedure that requires a valid
// calibration refusing to start a unit on an uncalibrated, expired or changed station.
// Levels follow their definitions: 0 dBu = √0.6 V RMS (1 mW in 600 Ω), 0 dBV = 1 V RMS, and a
// full-scale sine is 0 dBFS (AES17); expected figures are computed here from those, never read from the code.

import { existsSync, readdirSync, readFileSync, writeFileSync } from 'node:fs';
import { join } from 'node:path';
import { afterEach, beforeEach, describe, expect, it } from 'vitest';
import type { ChainCheckResult } from '../../shared/calibration/chain-check.ts';
import type { AudioSetup } from '../../shared/calibration/station-calibration.ts';
import { dispatch } from '../../electron/services/handlers.ts';
import { openStation } from '../../electron/services/station.ts';
import { DEMO_PROCEDURE } from '../../shared/procedures/demo-procedure.ts';
import { accepted, noCaller, TEST_SETUP, readingWithThd, refusedWith, tempDir } from '../support/station.ts';

const SETUP = TEST_SETUP;
const T0 = Date.parse('2026-11-02T09:00:00Z');
const DAY = 86_400_000;
const dbuOfVolts = (v: number) => 20 * Math.log10(v / Math.sqrt(0.6));

let dir: ReturnType<typeof tempDir>;
let clock: number;
let station: ReturnType<typeof openStation>;
const open = () => openStation({ dataDir: dir.path, stationName: 'host-7', now: () => new Date(clock), log: { record: () => '' } });

beforeEach(() => {
  dir = tempDir('trimbench-calibration-');
  clock = T0;
  station = open();
});
afterEach(() => {
  station.close();
  dir.remove();
});

const ok = <T>(channel: string, payload: unknown) => accepted<T>(station.handlers, channel, payload);
const refused = (channel: string, payload: unknown) => refusedWith(station.handlers, channel, payload);

const calibrate = (meterEntry = '0.7746 V', input: object = { method: 'loopback', generatorDbfs: -20, capturedDbfs: -18, capturedHz: 1000.2 }) =>
  ok<{ calibration: { id: number; output: { dbuAtFullScale: number }; input: { dbuAtFullScale: number } } }>('recordCalibration', {
    operator: 'A. Tester',
    setup: SETUP,
    output: { referenceHz: 1000, referenceDbfs: -20, meterEntry },
    input,
  });

describe('level calibration, computed in main', () => {
  it('stores dBu at 0 dBFS out from the voltmeter reading and in from the loopback, by the definitions', async () => {
    const { calibration } = await calibrate();
    // Out: the meter reads 0.7746 V (0 dBu) while the generator plays −20 dBFS, so 0 dBFS is +20 dBu.
    const outDbu = dbuOfVolts(0.7746) + 20;
    expect(calibration.output.dbuAtFullScale).toBeCloseTo(outDbu, 9);
    // In: the loop carries −20 dBFS + outDbu = 0 dBu, which the input reads as −18 dBFS: 0 dBFS in is +18 dBu.
    expect(calibration.input.dbuAtFullScale).toBeCloseTo(-20 + outDbu + 18, 9);
  });

  it('accepts the reading in dBu and dBV as well (0 dBV = 1 V = 20·log10(1/√0.6) dBu)', async () => {
    const { calibration } = await calibrate('-10 dBV');
    expect(calibration.output.dbuAtFullScale).toBeCloseTo(-10 + dbuOfVolts(1) + 20, 9);
  });

  it('refuses a reading a thousand times off (mV read as V) with what to check, and stores nothing', async () => {
    const message = await refused('recordCalibration', {
      operator: 'A. Tester',
      setup: SETUP,
      output: { referenceHz: 1000, referenceDbfs: -20, meterEntry: '774.6 V' },
      input: { method: 'stated', statedEntry: '+18 dBu' },
    });
    expect(message).toMatch(/mV or V/);
    expect((await ok<unknown[]>('listCalibrations', {})).length).toBe(0);
  });

  it('refuses a loopback that heard another frequency than the reference', async () => {
    const message = await refused('recordCalibration', {
      operator: 'A. Tester',
      setup: SETUP,
      output: { referenceHz: 1000, referenceDbfs: -20, meterEntry: '0.7746 V' },
      input: { method: 'loopback', generatorDbfs: -20, capturedDbfs: -18, capturedHz: 1100 },
    });
    expect(message).toContain('1100.0 Hz, not the 1000 Hz reference');
  });

  it('takes an interface’s stated input level for 0 dBFS', async () => {
    const { calibration } = await calibrate('0.7746 V', { method: 'stated', statedEntry: '+18 dBu' });
    expect(calibration.input.dbuAtFullScale).toBeCloseTo(18, 9);
  });
});

describe('the chain check, judged in main', () => {
  function result(overrides: Partial<ChainCheckResult> = {}): ChainCheckResult {
    // A response falling 3 dB at 20 Hz (inside the default ±0.5 dB band from 20 Hz), yet claiming
    // to be flat in its relative figures.
    const points = [10, 20, 1000, 20000].map((f) => {
      const gainDb = f <= 20 ? -3 : 0;
      return { frequencyHz: f, generatorDbfs: -12, capturedDbfs: -12 + gainDb, gainDb: 0, relativeDb: 0 };
    });
    return {
      schemaVersion: 1,
      measuredAt: new Date(clock).toISOString(),
      sampleRateHz: 48000,
      inputDbuAtFullScale: 30, // forged: the calibration says otherwise
      residuals: [{ frequencyHz: 1000, generatorDbfs: -12, thdDb: -105, thdnDb: -95 }],
      noiseFloor: { bandLowHz: 20, bandHighHz: 20000, unweightedDbfs: -110, aWeightedDbfs: -112, unweightedDbu: -200, aWeightedDbu: -200 },
      response: { referenceHz: 1000, referenceGainDb: 0, points },
      responseRefusal: null,
      latency: { latencySamples: 480, latencyMs: 10, confidence: 30, inverted: false },
      latencyRefusal: null,
      ...overrides,
    };
  }

  it('re-derives the response and the dBu noise from the raw figures, so forged ones do not pass', async () => {
    const { calibration } = await calibrate();
    const stored = await ok<{ chainCheck: { result: ChainCheckResult; judgement: { pass: boolean; items: { kind: string; pass: boolean }[] } } }>(
      'recordChainCheck',
      { calibrationId: calibration.id, operator: 'A. Tester', result: result() },
    );
    const at20 = stored.chainCheck.result.response!.points.find((p) => p.frequencyHz === 20)!;
    expect(at20.relativeDb).toBeCloseTo(-3, 9);
    // −112 dBFS A-weighted plus the input's dBu at 0 dBFS.
    expect(stored.chainCheck.result.noiseFloor!.aWeightedDbu).toBeCloseTo(-112 + calibration.input.dbuAtFullScale, 9);
    expect(stored.chainCheck.judgement.items.find((i) => i.kind === 'response-flatness')!.pass).toBe(false);
    expect(stored.chainCheck.judgement.pass).toBe(false);
  });

  it('refuses a noise floor below the thermal noise of a 150 Ω source, which no chain can beat (Johnson–Nyquist)', async () => {
    const { calibration } = await calibrate();
    // v = √(4kTRB): k = 1.380649e-23 J/K (SI 2019, exact), T = 290 K, R = 150 Ω, B = 19 980 Hz.
    const thermalDbu = dbuOfVolts(Math.sqrt(4 * 1.380649e-23 * 290 * 150 * 19_980));
    // An unweighted floor 3 dB under it, in dBFS at this calibration's input.
    const belowDbfs = thermalDbu - 3 - calibration.input.dbuAtFullScale;
    const floor = { bandLowHz: 20, bandHighHz: 20000, unweightedDbfs: belowDbfs, aWeightedDbfs: belowDbfs - 2, unweightedDbu: null, aWeightedDbu: null };
    const message = await refused('recordChainCheck', { calibrationId: calibration.id, operator: 'A. Tester', result: result({ noiseFloor: floor }) });
    expect(message).toMatch(/below the thermal noise of a 150 Ω source/);
    const above = { ...floor, unweightedDbfs: belowDbfs + 6, aWeightedDbfs: belowDbfs + 4 };
    await ok('recordChainCheck', { calibrationId: calibration.id, operator: 'A. Tester', result: result({ noiseFloor: above }) });
  });

  it('refuses a chain check of a calibration that is no longer the latest, or at another sample rate', async () => {
    const first = await calibrate();
    await calibrate();
    expect(await refused('recordChainCheck', { calibrationId: first.calibration.id, operator: 'A. Tester', result: result() })).toMatch(
      /no longer the station's latest/,
    );
    const latest = (await ok<{ calibration: { id: number } }>('getStationCalibration', {})).calibration;
    expect(await refused('recordChainCheck', { calibrationId: latest.id, operator: 'A. Tester', result: result({ sampleRateHz: 44100 }) })).toMatch(
      /44100 Hz/,
    );
  });
});

describe('a procedure that requires a calibration', () => {
  let procedureId: number;
  beforeEach(() => {
    procedureId = station.records.ensureProcedure({ ...DEMO_PROCEDURE, code: 'MG20-CAL', revision: 'A', requiresCalibration: true });
  });
  const openUnit = (setup: AudioSetup | null, serial = 'MG20-2611-0042') =>
    dispatch(station.handlers, 'openRun', { serial, procedureId, operator: 'A. Tester', setup }, noCaller);

  it('refuses to start a unit on an uncalibrated station, saying how to fix it', async () => {
    const result = await openUnit(SETUP);
    expect(!result.ok && result.error.message).toMatch(/requires a calibrated station.*not calibrated.*Calibrate it in Station settings/);
  });

  it('starts a unit while the calibration holds, and the run names it; refuses once it expired or the setup changed', async () => {
    const { calibration } = await calibrate();
    clock = T0 + 29 * DAY;
    const started = await openUnit(SETUP);
    if (!started.ok) throw new Error(started.error.message);
    const used = (started.value as { calibration: { id: number; operator: string; madeAt: string; expiresAt: string } }).calibration;
    expect(used.id).toBe(calibration.id);
    expect(used.operator).toBe('A. Tester');
    // Expiry 30 days (the default) from when it was made.
    expect(used.expiresAt).toBe(new Date(T0 + 30 * DAY).toISOString());

    const otherRate = await openUnit({ ...SETUP, sampleRateHz: 44100 }, 'MG20-2611-0043');
    expect(!otherRate.ok && otherRate.error.message).toMatch(/the sample rate \(calibrated at 48000 Hz\)/);
    const otherInput = await openUnit({ ...SETUP, inputDeviceId: 'in-2', inputDeviceLabel: 'USB mic' }, 'MG20-2611-0044');
    expect(!otherInput.ok && otherInput.error.message).toMatch(/the input device/);

    clock = T0 + 30 * DAY + 1;
    const expired = await openUnit(SETUP, 'MG20-2611-0045');
    expect(!expired.ok && expired.error.message).toMatch(/expired on 2026-12-02/);
  });

  it('a run started under a calibration that expires meanwhile records no more points and cannot pass', async () => {
    await calibrate();
    clock = T0 + 29 * DAY;
    const started = await openUnit(SETUP);
    if (!started.ok) throw new Error(started.error.message);
    const runId = (started.value as { run: { id: number } }).run.id;
    await dispatch(station.handlers, 'acknowledgeNotice', { runId, stepId: 'safety' }, noCaller);
    const stimulus = { on: true, frequencyHz: DEMO_PROCEDURE.trim.stimulusHz, levelDbfs: DEMO_PROCEDURE.trim.stimulusLevelDbfs };
    const point = (position: number) => ({ runId, position, reading: readingWithThd(-40 - position), live: null, stimulus, setup: SETUP });
    expect((await dispatch(station.handlers, 'recordTrimPoint', point(0), noCaller)).ok).toBe(true);
    clock = T0 + 31 * DAY; // past the 30 days from T0
    const refusedPoint = await dispatch(station.handlers, 'recordTrimPoint', point(1), noCaller);
    expect(!refusedPoint.ok && refusedPoint.error.message).toMatch(/calibration this run was started under expired on 2026-12-02/);
    const finish = await dispatch(station.handlers, 'finishRun', { runId }, noCaller);
    expect(!finish.ok && finish.error.name).toBe('CannotPass');
    expect(!finish.ok && finish.error.message).toMatch(/expired on 2026-12-02/);
    const asFail = await dispatch(station.handlers, 'finishRun', { runId, asFailure: true }, noCaller);
    expect(asFail.ok && (asFail.value as { run: { verdict: string } }).run.verdict).toBe('fail');
  });

  it('the demo procedure needs none: a unit starts on an uncalibrated station, naming no calibration', async () => {
    const demoId = station.records.listProcedures().find((p) => p.definition.code === DEMO_PROCEDURE.code)!.id;
    const result = await dispatch(station.handlers, 'openRun', { serial: 'MG20-2611-0042', procedureId: demoId, operator: 'A. Tester' }, noCaller);
    expect(result.ok && (result.value as { calibration: unknown }).calibration).toBeNull();
  });
});

describe('station settings file', () => {
  const settingsFile = () => join(dir.path, 'station-settings.json');
  const current = async () => (await ok<{ settings: Record<string, unknown> }>('getStationCalibration', {})).settings;

  it('starts from the host name and defaults, saves a versioned file, and keeps the old one in backups/', async () => {
    const first = await current();
    expect(first.stationName).toBe('host-7');
    expect(existsSync(settingsFile())).toBe(false);
    await ok('saveStationSettings', { ...first, stationName: 'Bench 3', mainsHz: 60 });
    const file = JSON.parse(readFileSync(settingsFile(), 'utf8'));
    expect(file).toMatchObject({ format: 'trimbench-station-settings', version: 1, settings: { stationName: 'Bench 3', mainsHz: 60 } });
    expect((await ok<{ stationName: string }>('describeStation', {})).stationName).toBe('Bench 3');
    clock += 1000;
    await ok('saveStationSettings', { ...first, stationName: 'Bench 4' });
    const backups = readdirSync(join(dir.path, 'backups')).filter((n) => n.startsWith('station-settings-'));
    expect(backups).toHaveLength(1);
    expect(JSON.parse(readFileSync(join(dir.path, 'backups', backups[0]), 'utf8')).settings.stationName).toBe('Bench 3');
    // A restart reads what was saved.
    station.close();
    station = open();
    expect((await current()).stationName).toBe('Bench 4');
  });

  it('refuses bad values with the field named, and changes nothing', async () => {
    const first = await current();
    const message = await refused('saveStationSettings', { ...first, calibrationExpiryDays: 0 });
    expect(message).toMatch(/calibrationExpiryDays/);
    expect(existsSync(settingsFile())).toBe(false);
  });

  it('refuses a file written by a newer Trimbench, and a damaged one, naming the file', () => {
    station.close();
    writeFileSync(settingsFile(), JSON.stringify({ format: 'trimbench-station-settings', version: 2, settings: {} }));
    expect(() => open()).toThrow(new RegExp(`${settingsFile()} was written by a newer Trimbench`));
    writeFileSync(settingsFile(), '{"format": "trimbench-station-se');
    expect(() => open()).toThrow(/is damaged/);
    writeFileSync(settingsFile(), JSON.stringify({ format: 'trimbench-station-settings', version: 1, settings: { stationName: '' } }));
    expect(() => open()).toThrow(/wrong value/);
    station = { close: () => {} } as typeof station;
  });
});
