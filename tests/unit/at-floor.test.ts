// The at-floor flag: a reading whose THD comes close to the station's own residual THD (from the
// chain check) may be the station and not the unit. The margin's meaning is checked against its
// definition, and the flag against a synthetic tone whose THD is known from its construction.

import { describe, expect, it } from 'vitest';
import { dispatch } from '../../electron/services/handlers.ts';
import { DEMO_PROCEDURE } from '../../shared/procedures/demo-procedure.ts';
import { noCaller, openTestStation, readingWithThd, tempDir, startUnit } from '../support/station.ts';
import { AT_FLOOR_MARGIN_DB, isAtChainFloor } from '../../shared/calibration/station-calibration.ts';
import { LiveMeter } from '../../shared/measurement/live-meter.ts';
import { MeterSession, type MeterSessionSettings } from '../../shared/measurement/meter-session.ts';
import { tone } from '../support/signals.ts';

const RATE = 48000;
const F0 = 1000;
const BLOCK = 480;
/** An invented chain residual, typical of a good interface's loopback (DEFAULT_CHAIN_LIMITS_NOTE: invented). */
const RESIDUAL_THD_DB = -95;

/**
 * A tone whose only distortion is H3 at `thdDb` dBc: with one harmonic, THD (root of the summed
 * harmonic powers over the fundamental, IEEE 1241) is that harmonic's level.
 */
function toneWithThd(thdDb: number, seconds: number): Float32Array {
  return Float32Array.from(tone(Math.round(seconds * RATE), RATE, F0, 0.5, { partials: [{ order: 3, levelDbc: thdDb, phaseDeg: 0 }] }));
}

/** The last reading after feeding `samples` in 10 ms blocks. */
function lastReading(meter: { push(samples: Float32Array, length: number): unknown; reading: LiveMeter['reading'] }, samples: Float32Array) {
  for (let at = 0; at + BLOCK <= samples.length; at += BLOCK) meter.push(samples.subarray(at, at + BLOCK), BLOCK);
  return meter.reading;
}

/**
 * Share of the measured distortion power that is the chain's own, when the chain's residual is
 * `residualDb` and the reading `readingDb` (uncorrelated distortion products add in power, so the
 * reading's power is the unit's plus the chain's).
 */
const chainShare = (readingDb: number, residualDb: number) => 10 ** ((residualDb - readingDb) / 10);

describe('at-floor: the margin', () => {
  it('is where the chain contributes at least a quarter of the measured distortion power', () => {
    // Common practice: a reading is at the floor when the chain may account for a quarter or more of
    // it, i.e. 10·log10(4) = 6.02 dB. The stated 6 dB margin is that rounded to a whole dB.
    expect(Math.abs(AT_FLOOR_MARGIN_DB - 10 * Math.log10(4))).toBeLessThan(0.05);
    // 3 dB above the residual: the chain is half the power; 10 dB above: a tenth.
    expect(chainShare(RESIDUAL_THD_DB + 3, RESIDUAL_THD_DB)).toBeGreaterThan(0.25);
    expect(chainShare(RESIDUAL_THD_DB + 10, RESIDUAL_THD_DB)).toBeLessThan(0.25);
    expect(isAtChainFloor(RESIDUAL_THD_DB + 3, RESIDUAL_THD_DB)).toBe(true);
    expect(isAtChainFloor(RESIDUAL_THD_DB + 10, RESIDUAL_THD_DB)).toBe(false);
  });
});

describe('at-floor: the live meter sets the flag', () => {
  it('flags a reading 3 dB above the chain’s residual and not one 10 dB above it', () => {
    const near = new LiveMeter({ sampleRateHz: RATE, expectedFundamentalHz: F0, chainFloorThdDb: RESIDUAL_THD_DB });
    const nearReading = lastReading(near, toneWithThd(RESIDUAL_THD_DB + 3, 3));
    // The meter measured the constructed THD (so the flag is judged on the right number).
    expect(Math.abs(nearReading.thdDb - (RESIDUAL_THD_DB + 3))).toBeLessThan(0.5);
    expect(nearReading.flags).toContain('at-floor');

    const clear = new LiveMeter({ sampleRateHz: RATE, expectedFundamentalHz: F0, chainFloorThdDb: RESIDUAL_THD_DB });
    const clearReading = lastReading(clear, toneWithThd(RESIDUAL_THD_DB + 10, 3));
    expect(Math.abs(clearReading.thdDb - (RESIDUAL_THD_DB + 10))).toBeLessThan(0.5);
    expect(clearReading.flags).not.toContain('at-floor');
  });

  it('never flags without a chain check, nor a reading with no signal', () => {
    const unchecked = new LiveMeter({ sampleRateHz: RATE, expectedFundamentalHz: F0, chainFloorThdDb: null });
    expect(lastReading(unchecked, toneWithThd(RESIDUAL_THD_DB + 3, 3)).flags).not.toContain('at-floor');
    // Silence: no fundamental, so no THD to compare (its THD is a floor value, not a measurement).
    const silent = new LiveMeter({ sampleRateHz: RATE, expectedFundamentalHz: F0, chainFloorThdDb: RESIDUAL_THD_DB });
    const reading = lastReading(silent, new Float32Array(3 * RATE));
    expect(reading.flags).toContain('no-signal');
    expect(reading.flags).not.toContain('at-floor');
  });

  it('takes a floor that arrives with new settings (the worker’s configure message)', () => {
    const settings: MeterSessionSettings = { expectedFundamentalHz: F0, harmonicCount: 10, mainsHz: 50, stimulusLocked: false, chainFloorThdDb: null };
    const session = new MeterSession(settings, { sampleGuard: false });
    const samples = toneWithThd(RESIDUAL_THD_DB + 3, 3);
    const feed = (from: number, to: number) => {
      let meter: LiveMeter | null = null;
      for (let at = from; at + BLOCK <= to; at += BLOCK) meter = session.push(samples.subarray(at, at + BLOCK), BLOCK, RATE) ?? meter;
      return meter!.reading;
    };
    expect(feed(0, RATE * 1.5).flags).not.toContain('at-floor');
    // The chain check is loaded after capture started: only the floor changes, and it must reach the meter.
    session.configure({ ...settings, chainFloorThdDb: RESIDUAL_THD_DB });
    expect(feed(RATE * 1.5, RATE * 3).flags).toContain('at-floor');
  });
});

describe('at-floor: main keeps the flag', () => {
  it('accepts a point flagged at-floor through the IPC contract and returns it flagged, also after a reopen', async () => {
    const dir = tempDir();
    let station = openTestStation(dir.path);
    try {
      const procedureId = station.records.listProcedures()[0].id;
      const opened = await dispatch(station.handlers, 'openRun', { serial: 'MG20-2611-0077', procedureId, operator: 'A. Tester' }, noCaller);
      if (!opened.ok) throw new Error(opened.error.message);
      const runId = (opened.value as { run: { id: number } }).run.id;
      await dispatch(station.handlers, 'acknowledgeNotice', { runId, stepId: 'safety' }, noCaller);
      const stimulus = { on: true, frequencyHz: DEMO_PROCEDURE.trim.stimulusHz, levelDbfs: DEMO_PROCEDURE.trim.stimulusLevelDbfs };
      const fundamental = { frequencyHz: DEMO_PROCEDURE.trim.stimulusHz, levelDbfs: -12, phaseDeg: 10 };
      const reading = readingWithThd(-92, { fundamental, measuredFundamentalHz: fundamental.frequencyHz, flags: ['at-floor'] });
      reading.harmonics = [{ order: 3, frequencyHz: 3 * fundamental.frequencyHz, levelDbc: -92, phaseDeg: 90 }];
      const recorded = await dispatch(station.handlers, 'recordTrimPoint', { runId, position: 0, reading, live: null, stimulus, unsettled: 'refuse' }, noCaller);
      if (!recorded.ok) throw new Error(recorded.error.message);
      expect((recorded.value as { point: { reading: { flags: string[] } } }).point.reading.flags).toEqual(['at-floor']);
      station.close();
      station = openTestStation(dir.path);
      const reopened = startUnit(station.records, { serial: 'MG20-2611-0077', procedureId, operator: 'A. Tester' });
      expect(reopened.trimPoints[0].reading.flags).toEqual(['at-floor']);
    } finally {
      station.close();
      dir.remove();
    }
  });
});
