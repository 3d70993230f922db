// A seeded property-based fuzz of the IPC dispatcher (issue 8): valid payloads for every channel,
// mutated field by field, and arbitrary values, sent to a real station over a temporary folder.
// For every call: dispatch never throws; a rejected call writes nothing (row counts unchanged); an
// accepted payload respects the bounds written out here, independently of the contract's own code.

import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import fc from 'fast-check';
import { dispatch } from '../../electron/services/handlers.ts';
import { IPC_CHANNELS } from '../../shared/ipc/channels.ts';
import type { Reading } from '../../shared/measurement/reading.ts';
import { DEMO_PROCEDURE } from '../../shared/procedures/demo-procedure.ts';
import { noCaller, openTestStation, readingWithThd, tempDir } from '../support/station.ts';

const SEED = 20_260_808;
const PAYLOADS = 5_000;
const STIMULUS = { on: true, frequencyHz: DEMO_PROCEDURE.trim.stimulusHz, levelDbfs: DEMO_PROCEDURE.trim.stimulusLevelDbfs };
const TRIM = DEMO_PROCEDURE.trim;

let dir: ReturnType<typeof tempDir>;
let station: ReturnType<typeof openTestStation>;
beforeAll(() => {
  dir = tempDir();
  station = openTestStation(dir.path);
});
afterAll(() => {
  station.close();
  dir.remove();
});

const TABLES = ['procedures', 'units', 'runs', 'trim_points', 'trim_assessments', 'point_confirmations', 'warning_changes', 'warm_checks'];
/** Everything a call could write: row counts, finished runs and recorded sheets. */
let snapshotQuery: { get(): unknown } | null = null;
function snapshot(): string {
  snapshotQuery ??= station.db.prepare(
    `SELECT ${TABLES.map((t) => `(SELECT COUNT(*) FROM ${t}) AS ${t}`).join(', ')},
            (SELECT COUNT(finished_at) FROM runs) AS finished, (SELECT COUNT(sheet_pdf_path) FROM runs) AS sheets`,
  );
  return JSON.stringify(snapshotQuery.get());
}

// --- Bounds, written out from their sources rather than imported from the contract -------------------

/** Unicode Cc (C0, DEL, C1) and the bidi embedding/override/isolate controls (UAX #9, table 1). */
const CONTROL_OR_BIDI = /[\u0000-\u001f\u007f-\u009f\u061c\u200e\u200f\u202a-\u202e\u2066-\u2069]/u;
/** Nothing visible: White_Space, zero-width and other format characters (Unicode ch. 23). */
const BLANK = /^[\s\p{Z}\p{Cf}\u115f\u1160\u3164\uffa0]*$/u;

function readingProblems(reading: Reading): string[] {
  const problems: string[] = [];
  const nyquistHz = reading.sampleRateHz / 2;
  // Interface sample rates, 8 kHz to 768 kHz (common practice; issue 8's bound).
  if (!(reading.sampleRateHz >= 8000 && reading.sampleRateHz <= 768_000)) problems.push('sample rate');
  // Sampling theorem: nothing at or above half the sample rate can be measured.
  if (!(reading.fundamental.frequencyHz < nyquistHz)) problems.push('fundamental above Nyquist');
  // AES17: 0 dBFS is a full-scale sine; issue 8 allows at most +6 dBFS.
  if (!(reading.fundamental.levelDbfs <= 6)) problems.push('fundamental level');
  const orders = reading.harmonics.map((h) => h.order);
  if (new Set(orders).size !== orders.length) problems.push('repeated order');
  let power = 0;
  for (const h of reading.harmonics) {
    if (!(h.order >= 2 && h.order <= 64)) problems.push('order');
    if (!(h.frequencyHz < nyquistHz)) problems.push('harmonic above Nyquist');
    if (!(h.levelDbc >= -400 && h.levelDbc <= 40)) problems.push('dBc range');
    if (!(h.phaseDeg > -180 && h.phaseDeg <= 180)) problems.push('phase range');
    power += 10 ** (h.levelDbc / 10);
  }
  if (!(reading.thdDb >= -400 && reading.thdDb <= 40)) problems.push('thdDb range');
  // THD as the RSS of the harmonics over the fundamental (IEEE 1241, from memory), within 0.1 dB
  // (rounding) unless harmonics sit at the meter's −300 dB floor, which widens it only downward.
  const rssDb = power > 0 ? 20 * Math.log10(Math.sqrt(power)) : -Infinity;
  if (rssDb > -290 && Math.abs(reading.thdDb - rssDb) > 0.1 + 1e-9) problems.push('thdDb vs harmonics');
  if (rssDb > -290 && Math.abs(20 * Math.log10(reading.thdPercent / 100) - rssDb) > 0.1 + 1e-9) problems.push('thdPercent vs harmonics');
  if (new Set(reading.flags).size !== reading.flags.length || reading.flags.length > 8) problems.push('flags');
  return problems;
}

// --- Valid payloads, and ways to break them ------------------------------------------------------------

interface State {
  procedureId: number;
  runId: number;
  pointId: number;
}

function currentState(): State {
  const procedureId = (station.db.prepare('SELECT MAX(id) AS id FROM procedures').get() as { id: number }).id;
  const run = station.db.prepare('SELECT MAX(id) AS id FROM runs').get() as { id: number | null };
  const runId = run.id ?? 1;
  const point = station.db
    .prepare('SELECT id FROM trim_points WHERE run_id = ? ORDER BY in_fit, id DESC LIMIT 1')
    .get(runId) as { id: number } | undefined;
  return { procedureId, runId, pointId: point?.id ?? 1 };
}

const unsettledReading = (thdDb: number): Reading => readingWithThd(thdDb, { settled: false, settleProgress: 0.5, settleRemainingS: 2 });

interface Seeds {
  serial: number;
  position: number;
  thdDb: number;
  marked: boolean;
}

function validPayload(channel: string, s: State, seeds: Seeds): unknown {
  switch (channel) {
    case 'openRun':
      return { serial: `MG20-2611-${String(40 + seeds.serial).padStart(4, '0')}`, procedureId: s.procedureId, operator: 'A. Tester' };
    case 'recordTrimPoint':
      return {
        runId: s.runId,
        position: seeds.position,
        reading: seeds.marked ? unsettledReading(seeds.thdDb) : readingWithThd(seeds.thdDb),
        live: { levelsDbfs: [-12, -12, -12], lfDbfs: [-110, -110, -110] },
        stimulus: STIMULUS,
        ...(seeds.marked ? { unsettled: 'record-marked' } : {}),
      };
    case 'includeUnsettledPoint':
      return { runId: s.runId, pointId: s.pointId };
    case 'logWarningChanges':
      return { runId: s.runId, changes: [{ id: 'gain-rise', change: 'raised', position: seeds.position, seen: 'gain up 1.2 dB' }] };
    case 'recordWarmCheck':
      return { runId: s.runId, coldTemperatureC: 22, warmTemperatureC: 40, reading: readingWithThd(seeds.thdDb), stimulus: STIMULUS };
    case 'finishRun':
      return { runId: s.runId, asFailure: true };
    case 'saveSheetPdf':
    case 'printSheet':
      return { runId: s.runId };
    default:
      return {};
  }
}

/** Every path to a value inside a payload (objects and arrays), the root included. */
function paths(value: unknown, prefix: (string | number)[] = []): (string | number)[][] {
  const out = [prefix];
  // A huge list is replaced whole, never walked item by item.
  if (value && typeof value === 'object' && prefix.length < 6 && !(Array.isArray(value) && value.length > 64)) {
    for (const [key, inner] of Object.entries(value)) out.push(...paths(inner, [...prefix, Array.isArray(value) ? Number(key) : key]));
  }
  return out;
}

type Mutation = { kind: 'set' | 'delete' | 'add'; at: number; value: unknown; key: string };

/** Stands for a list of 10^5 flags (issue 8), built only when used so a report never prints it. */
const HUGE_LIST = 'HUGE_LIST_OF_100000_FLAGS';
const materialise = (value: unknown) => (value === HUGE_LIST ? Array<string>(100_000).fill('at-floor') : value);

function mutate(payload: unknown, mutations: readonly Mutation[]): unknown {
  let root: unknown = structuredClone(payload);
  for (const raw of mutations) {
    const m = { ...raw, value: materialise(raw.value) };
    const all = paths(root);
    const path = all[m.at % all.length];
    if (path.length === 0) {
      if (m.kind === 'set') root = m.value;
      else if (root && typeof root === 'object') (root as Record<string, unknown>)[m.key] = m.value;
      continue;
    }
    const parent = path.slice(0, -1).reduce<unknown>((node, key) => (node as Record<string | number, unknown>)[key], root) as Record<string | number, unknown>;
    if (!parent || typeof parent !== 'object') continue;
    const last = path.at(-1)!;
    if (m.kind === 'delete') delete parent[last];
    else if (m.kind === 'add' && parent[last] && typeof parent[last] === 'object') (parent[last] as Record<string, unknown>)[m.key] = m.value;
    else parent[last] = m.value;
  }
  return root;
}

const nastyNumber = fc.oneof(
  fc.double(), // NaN, ±Infinity, −0 and subnormals included
  fc.integer(),
  fc.constantFrom(1e308, -1e308, 7000, -999, 768_001, 7999, 8000, 24_000, 180, -180, 181, 64, 65, 0, -1, 0.316, 2 ** 53),
);
const nastyString = fc.oneof(
  fc.string({ unit: 'binary', maxLength: 80 }),
  fc.constantFrom('\u0000', 'A.\u0000Tester', '\u001b[2J', '\u001b]0;x\u0007', 'A. \u202eretseT', '\u200b\u200b', '\u00a0\u200b', ' ', '', 'x'.repeat(5000), 'MG20-2611-0042'),
);
const nastyValue: fc.Arbitrary<unknown> = fc.oneof(
  { weight: 4, arbitrary: nastyNumber },
  { weight: 2, arbitrary: nastyString },
  { weight: 1, arbitrary: fc.anything({ maxDepth: 2 }) },
  { weight: 1, arbitrary: fc.array(fc.constantFrom('clipping', 'at-floor', 'no-signal', 'mains-coincident', 'fine'), { maxLength: 12 }) },
  { weight: 1, arbitrary: fc.constantFrom(null, undefined, true, false, [], {}) },
  // A list far beyond any bound (issue 8: 10^5 flags).
  { weight: 1, arbitrary: fc.constant(HUGE_LIST) },
);
const mutation: fc.Arbitrary<Mutation> = fc.record({
  kind: fc.constantFrom('set', 'set', 'set', 'delete', 'add'),
  at: fc.nat(),
  value: nastyValue,
  key: fc.oneof(fc.constantFrom('verdict', '__proto__', 'constructor', 'extra'), fc.string({ maxLength: 40 })),
});

const call = fc.record({
  channel: fc.oneof({ weight: 20, arbitrary: fc.constantFrom(...IPC_CHANNELS) }, { weight: 1, arbitrary: fc.string({ maxLength: 20 }) }),
  seeds: fc.record({
    serial: fc.integer({ min: 0, max: 5 }),
    position: fc.double({ min: TRIM.positionMin, max: TRIM.positionMax, noNaN: true }),
    thdDb: fc.double({ min: -90, max: -30, noNaN: true }),
    marked: fc.boolean(),
  }),
  shape: fc.oneof(
    { weight: 3, arbitrary: fc.constant({ whole: false, mutations: [] as Mutation[] }) },
    { weight: 12, arbitrary: fc.array(mutation, { minLength: 1, maxLength: 3 }).map((mutations) => ({ whole: false, mutations })) },
    { weight: 1, arbitrary: fc.anything({ maxDepth: 3 }).map((value) => ({ whole: true, mutations: [{ kind: 'set', at: 0, value, key: '' } as Mutation] })) },
  ),
});

const WRITES_TO_A_RUN = new Set(['recordTrimPoint', 'includeUnsettledPoint', 'logWarningChanges', 'recordWarmCheck', 'finishRun']);
/** Longest error message: a few lines a person reads, never one line per item of a list. */
const MAX_MESSAGE_CHARS = 2_000;

describe('IPC dispatcher fuzz (seeded)', () => {
  it(`holds for ${PAYLOADS} payloads across every channel`, async () => {
    const tally = { accepted: new Map<string, number>(), rejected: new Map<string, number>() };
    let lastOpenedRunId: number | null = null;
    await fc.assert(
      fc.asyncProperty(call, async ({ channel, seeds, shape }) => {
        const state = currentState();
        const payload = mutate(validPayload(channel, state, seeds), shape.mutations);
        const before = snapshot();
        const runBefore = station.db.prepare('SELECT finished_at FROM runs WHERE id = ?').get(state.runId) as { finished_at: string | null } | undefined;
        let result;
        try {
          result = await dispatch(station.handlers, channel, payload, noCaller);
        } catch (error) {
          throw new Error(`dispatch threw on ${channel}: ${String(error)}`);
        }
        const bucket = result.ok ? tally.accepted : tally.rejected;
        bucket.set(channel, (bucket.get(channel) ?? 0) + 1);
        if (!result.ok) {
          expect(snapshot(), `${channel} was rejected (${result.error.message.slice(0, 200)}) but wrote`).toBe(before);
          expect(result.error.message.length).toBeLessThanOrEqual(MAX_MESSAGE_CHARS);
          expect(result.error.name).not.toBe('InternalError');
          return;
        }
        const request = payload as Record<string, unknown>;
        if (channel === 'openRun') {
          const operator = String(request.operator).trim();
          expect(operator.length).toBeLessThanOrEqual(60);
          expect(CONTROL_OR_BIDI.test(operator)).toBe(false);
          expect(BLANK.test(operator)).toBe(false);
          lastOpenedRunId = (result.value as { run: { id: number } }).run.id;
          // Safety first, as the walk does: main records no trim point before the notice.
          if ((result.value as { judgement: { nextStepId: string | null } }).judgement.nextStepId === 'safety') {
            await dispatch(station.handlers, 'acknowledgeNotice', { runId: lastOpenedRunId, stepId: 'safety' }, noCaller);
          }
        }
        if (WRITES_TO_A_RUN.has(channel) && snapshot() !== before) {
          // Only the run the station opened last, and only while it was unfinished.
          expect(request.runId).toBe(lastOpenedRunId);
          expect(runBefore?.finished_at ?? null).toBeNull();
        }
        if (channel === 'recordTrimPoint' || channel === 'recordWarmCheck') {
          expect(readingProblems(request.reading as Reading)).toEqual([]);
        }
        if (channel === 'recordTrimPoint') {
          const position = request.position as number;
          expect(position >= TRIM.positionMin && position <= TRIM.positionMax).toBe(true);
        }
        if (channel === 'logWarningChanges') {
          const changes = request.changes as { seen: string; position: number }[];
          expect(changes.length).toBeLessThanOrEqual(32);
          for (const c of changes) {
            expect(c.seen.length).toBeLessThanOrEqual(400);
            expect(CONTROL_OR_BIDI.test(c.seen)).toBe(false);
            expect(c.position >= TRIM.positionMin && c.position <= TRIM.positionMax).toBe(true);
          }
        }
      }),
      { seed: SEED, numRuns: PAYLOADS, endOnFailure: true },
    );
    // Every channel was exercised, and the valid payloads were accepted some of the time.
    for (const channel of IPC_CHANNELS) {
      expect((tally.accepted.get(channel) ?? 0) + (tally.rejected.get(channel) ?? 0), channel).toBeGreaterThan(100);
    }
    for (const channel of ['openRun', 'recordTrimPoint', 'logWarningChanges', 'finishRun']) {
      expect(tally.accepted.get(channel) ?? 0, channel).toBeGreaterThan(0);
    }
    console.log('[ipc-fuzz] accepted', Object.fromEntries(tally.accepted), 'rejected', Object.fromEntries(tally.rejected));
  }, 120_000);
});
