// A station over a fresh temporary data folder, and readings shaped like the worker's.

import { mkdtempSync, rmSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import type { AudioSetup } from '../../shared/calibration/station-calibration.ts';
import { FLOOR_DB, type Reading } from '../../shared/measurement/reading.ts';
import { dispatch, type CallerContext, type Handlers } from '../../electron/services/handlers.ts';
import { openStation } from '../../electron/services/station.ts';

export function tempDir(prefix = 'trimbench-test-'): { path: string; remove(): void } {
  const path = mkdtempSync(join(tmpdir(), prefix));
  return { path, remove: () => rmSync(path, { recursive: true, force: true }) };
}

export function openTestStation(dataDir: string) {
  return openStation({ dataDir, stationName: 'test-bench-1' });
}

/**
 * A plausible settled reading with the given THD (for records tests; not a measurement). The
 * frequency found is the fundamental's, as in a windowed reading, unless given.
 */
export function readingWithThd(thdDb: number, overrides: Partial<Reading> = {}): Reading {
  const thdPercent = 100 * 10 ** (thdDb / 20);
  const fundamental = overrides.fundamental ?? { frequencyHz: 14, levelDbfs: -12, phaseDeg: 10 };
  return {
    sequence: 12,
    sampleRateHz: 48000,
    frameSize: 65536,
    discontinuities: 0,
    settled: true,
    settleProgress: 1,
    settleRemainingS: 0,
    subAudioDbfs: -110,
    mode: 'windowed',
    fundamental,
    measuredFundamentalHz: fundamental.frequencyHz,
    harmonics: [{ order: 3, frequencyHz: 42, levelDbc: thdDb, phaseDeg: 90 }],
    harmonicsAboveNyquist: [],
    thdPercent,
    thdDb,
    thdnPercent: thdPercent * 1.01,
    thdnDb: thdDb + 0.1,
    sinadDb: -(thdDb + 0.1),
    enob: (-(thdDb + 0.1) - 1.76) / 6.02,
    noiseDbfs: -120,
    noiseAWeightedDbfs: -122,
    hum: null,
    humSearch: null,
    bandHz: { lowHz: 20, highHz: 20000 },
    mainsCoincidentOrders: [],
    flags: [],
    ...overrides,
  };
}

/**
 * The reading as the station's meter gives it: every harmonic H2–H10 counted, those the reading
 * does not hold at the meter's floor (a THD check judges only a reading that counted them all).
 */
export function withAllHarmonics(reading: Reading): Reading {
  const f = reading.fundamental.frequencyHz;
  const listed = new Set([...reading.harmonics.map((h) => h.order), ...reading.harmonicsAboveNyquist]);
  const missing = [2, 3, 4, 5, 6, 7, 8, 9, 10].filter((order) => !listed.has(order));
  return {
    ...reading,
    harmonics: [...reading.harmonics, ...missing.filter((n) => n * f < reading.sampleRateHz / 2).map((order) => ({ order, frequencyHz: order * f, levelDbc: FLOOR_DB, phaseDeg: 0 }))].sort((a, b) => a.order - b.order),
    harmonicsAboveNyquist: [...reading.harmonicsAboveNyquist, ...missing.filter((n) => n * f >= reading.sampleRateHz / 2)],
  };
}

/**
 * Opens a unit as the step walk does: the run, then the notices before its first other step
 * acknowledged (safety first; main records no trim point before them). A resumed run whose notices
 * are already acknowledged is left as it is.
 */
export function startUnit(records: ReturnType<typeof openStation>['records'], request: Parameters<ReturnType<typeof openStation>['records']['openRun']>[0]) {
  let detail = records.openRun(request);
  for (;;) {
    const next = detail.procedureFile.steps.find((s) => s.id === detail.judgement.nextStepId);
    if (detail.run.finishedAt !== null || next?.kind !== 'notice') return detail;
    detail = records.acknowledgeNotice({ runId: detail.run.id, stepId: next.id });
  }
}

export const noCaller: CallerContext = {
  // The two ends every PDF has (ISO 32000-1 §7.5.2, §7.5.5); the sheet service refuses anything less.
  printToPdf: async () => new TextEncoder().encode('%PDF-1.4 test\n%%EOF\n'),
  print: async () => false,
  chooseProcedureFile: async () => null,
};

/**
 * A reading of the demo stimulus on a phasor line built by hand, H3(p) = 0.01·(1 − p/null) + j·0.0003
 * (design §5's straight line through the null): the true null lies at `trueNull` turns and its depth
 * is 20·log10(0.0003) = −70.5 dBc by construction.
 */
export function onPhasorLine(position: number, trueNull: number, overrides: Partial<Reading> = {}): Reading {
  const re = 0.01 * (1 - position / trueNull);
  const im = 0.0003;
  const levelDbc = 20 * Math.log10(Math.hypot(re, im));
  const phaseDeg = (Math.atan2(im, re) * 180) / Math.PI;
  return readingWithThd(levelDbc, { harmonics: [{ order: 3, frequencyHz: 42, levelDbc, phaseDeg }], ...overrides });
}

/** Live readings since the move: the level holding with the trimmer still, as a settled stage does (common practice). */
export const STEADY_LIVE = { levelsDbfs: Array<number>(12).fill(-12), lfDbfs: Array<number>(12).fill(-110) };

/** A call through the dispatcher that must succeed: its value. */
export async function accepted<T>(handlers: Handlers, channel: string, payload: unknown, caller: CallerContext = noCaller): Promise<T> {
  const result = await dispatch(handlers, channel, payload, caller);
  if (!result.ok) throw new Error(result.error.message);
  return result.value as T;
}

/** A call through the dispatcher that must be refused: the technician's message. */
export async function refusedWith(handlers: Handlers, channel: string, payload: unknown): Promise<string> {
  const result = await dispatch(handlers, channel, payload, noCaller);
  if (result.ok) throw new Error(`${channel} was accepted`);
  return result.error.message;
}

/** An interface as the page reports it with capture started: one input channel carries the unit. */
export const TEST_SETUP: AudioSetup = {
  inputDeviceId: 'in-1',
  inputDeviceLabel: 'Interface In 1-2',
  inputChannel: 0,
  outputDeviceId: 'out-1',
  outputDeviceLabel: 'Interface Out 1-2',
  sampleRateHz: 48000,
};
