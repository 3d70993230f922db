// The whole demo procedure on a simulated unit with no person at the bench: a scripted technician
// acknowledges the notice, trims by following the assistant exactly, and runs every check step,
// each reading taken from the simulated unit through the meter the app uses and written through
// the same calls the page makes (main judges and stores everything). The command line only opens
// the station and prints; every decision here comes from shared/ (the run plan, the planner, the
// check steps, the technician's rule), so the demo line proves those work without the page.

import type { IpcChannel } from '../ipc/channels.ts';
import type { IpcRequest, IpcResponse, RunDetail } from '../ipc/contract.ts';
import type { MeterSessionSettings } from '../measurement/meter-session.ts';
import { DEFAULT_ANALYZER_OPTIONS } from '../measurement/frame-analyzer.ts';
import type { BatchUnit } from '../sim/demo-batch.ts';
import { HeadlessBench, type SettledReading } from '../sim/headless-bench.ts';
import { nextMove } from '../trim/scripted-technician.ts';
import { measureCheckStep, noiseBandFor, type StationLevels } from './check-steps.ts';
import type { ProcedureFile } from './procedure-file.ts';
import { plannedStimulus, runPlan, type PlannedStep } from './run-plan.ts';
import { RESPONSE_CAPTURE_MARGIN_S, sweepSpecFor } from './response.ts';
import { logSweepLayout } from '../dsp/log-sweep.ts';
import type { StimulusSetting } from '../dsp/sine-source.ts';
import type { AudioSetup } from '../calibration/station-calibration.ts';
import { vRmsFromDbu } from '../levels.ts';
import { LiveMeter } from '../measurement/live-meter.ts';
import { DEMO_INTERFACE_DBU_AT_FULL_SCALE, DemoChain } from '../sim/demo-chain.ts';
import { maxLevelNext, maxLevelPlan, type MaxLevelPoint } from './max-level.ts';
import { demoScopeRecordText } from '../sim/demo-scope.ts';
import { CHAIN_CHECK_SCHEMA_VERSION, chainNoiseFloor, type ChainCheckResult } from '../calibration/chain-check.ts';
import { chainResponse, planSteppedSine, type ResponseStep } from '../calibration/chain-response.ts';
import { estimateLatency, latencyStimulus } from '../calibration/latency.ts';
import type { Reading } from '../measurement/reading.ts';

/** The calls the demo line makes, exactly as the page makes them; the caller turns a refusal into an error. */
export type LineCalls = <C extends 'acknowledgeNotice' | 'recordTrimPoint' | 'completeTrim' | 'recordCheckStep' | 'recordResponse' | 'recordMaxLevel' | 'attachScopeCapture' | 'finishRun'>(
  channel: C,
  request: IpcRequest<C>,
) => Promise<IpcResponse<C>>;

/** A call main refused: its own words, so the line can say which unit and step it was. */
export class LineCallRefused extends Error {
  override name = 'LineCallRefused';
  readonly channel: IpcChannel;
  constructor(channel: IpcChannel, message: string) {
    super(message);
    this.channel = channel;
  }
}

export interface LineStation {
  sampleRateHz: number;
  mainsHz: 50 | 60;
  /** The station's calibration the run was opened under. */
  levels: StationLevels;
  /** The audio setup the line records with, as the page sends it with every reading. */
  setup: AudioSetup;
  /**
   * Puts a scope record where the file dialog of main's next `attachScopeCapture` will choose it
   * (the technician saving the scope's export and picking it); null: the line has no scope, and a
   * ringing step is refused.
   */
  scopeFile: ((serial: string, text: string) => Promise<void> | void) | null;
}

/** What the demo line prints for one unit, from the run as main stored it. */
export interface LineUnitReport {
  serial: string;
  verdict: 'pass' | 'fail';
  trim: { finalPosition: number | null; trueNullPosition: number; points: number };
  steps: {
    id: string;
    kind: string;
    verdict: 'pass' | 'fail' | 'not-run';
    measurements: { quantity: string; value: number | null; unit: string; low: number | null; high: number | null }[];
  }[];
}

/** Harmonics counted, as the app's meter counts them (H2–H10). */
const HARMONIC_COUNT = DEFAULT_ANALYZER_OPTIONS.harmonicCount;
/** The technician stops trimming after this many points (as the simulated population's technicians). */
const POINT_CAP = 14;
/**
 * The longest a technician waits for a reading to settle, in the unit's seconds: several frames
 * at the lowest tone a step plays (12 cycles of 14 Hz is under a second), so only a unit that will
 * not settle runs into it.
 */
const MAX_SETTLE_S = 20;

/** The meter's settings for a generator setting, as the page derives them (App.tsx), and a step's noise band. */
function meterSettings(stimulus: StimulusSetting, mainsHz: 50 | 60, band: { lowHz: number; highHz: number } | null): MeterSessionSettings {
  return {
    expectedFundamentalHz: stimulus.on ? stimulus.frequencyHz : null,
    harmonicCount: HARMONIC_COUNT,
    mainsHz,
    // The demo bench plays and captures on one clock.
    stimulusLocked: true,
    chainFloorThdDb: null,
    ...(band && { bandLowHz: band.lowHz, bandHighHz: band.highHz }),
  };
}

const generatorOf = ({ on, frequencyHz, levelDbfs }: StimulusSetting): StimulusSetting => ({ on, frequencyHz, levelDbfs });

/**
 * Walks the run's procedure on one simulated unit, from the run main opened to the finished run.
 * Each step is written as it is done; a failed step that stops the run ends the walk there.
 */
export async function walkUnit(unit: BatchUnit, opened: RunDetail, call: LineCalls, station: LineStation): Promise<RunDetail> {
  const procedure: ProcedureFile = opened.procedureFile;
  const runId = opened.run.id;
  const bench = new HeadlessBench(station.sampleRateHz, unit.parameters, unit.noiseSeed, meterSettings({ on: false, frequencyHz: 1000, levelDbfs: -120 }, station.mainsHz, null));
  let detail = opened;
  for (const planned of runPlan(procedure, station.levels)) {
    if (planned.blocked) throw new LineCallRefused('recordCheckStep', planned.blocked);
    const needs = planned.needs;
    if (needs.kind === 'acknowledge') detail = await call('acknowledgeNotice', { runId, stepId: planned.stepId });
    else if (needs.kind === 'trim') {
      const trimmed = await trimUnit(bench, planned, procedure, runId, call, station);
      // Main takes "trim done" only for a trim that passes; one that does not ends the walk, and
      // the run is finished as FAIL with main's reasons, as the technician does.
      if (trimmed === null) break;
      detail = trimmed;
    } else if (needs.kind === 'sweep') detail = await responseStep(bench, planned, procedure, runId, call, station);
    else if (needs.kind === 'scope') detail = await ringingStep(unit, opened.run.serial, planned, runId, call, station);
    else if (procedure.steps[planned.index].kind === 'max-level') detail = await maxLevelStep(bench, planned, procedure, runId, call, station);
    else detail = await checkStep(bench, planned, procedure, runId, call, station);
    if (detail.judgement.stoppedAt !== null) break;
  }
  // A unit that cannot pass is finished as FAIL with main's reasons, as the technician would after Finish is refused.
  return call('finishRun', { runId, asFailure: detail.judgement.verdict !== 'pass' });
}

async function trimUnit(bench: HeadlessBench, planned: PlannedStep, procedure: ProcedureFile, runId: number, call: LineCalls, station: LineStation): Promise<RunDetail | null> {
  const step = procedure.steps[planned.index];
  if (step.kind !== 'trim' || planned.needs.kind !== 'trim') throw new Error(`step ${planned.stepId} is not a trim step`);
  const stimulus = generatorOf(plannedStimulus({ ...planned.needs.generator, levelDbu: null }, { sampleRateHz: station.sampleRateHz, mainsHz: station.mainsHz, harmonicCount: HARMONIC_COUNT }));
  bench.setStimulus(stimulus, meterSettings(stimulus, station.mainsHz, null));
  const habits = { positionStep: step.positionStep, pointCap: POINT_CAP };

  // The trimmer starts at the safe end (the step's first instruction).
  let position = step.positionMin;
  bench.moveTrimmer(position);
  let previous: number | null = null;
  let points = 0;
  for (;;) {
    const recorded = await call('recordTrimPoint', { runId, position, ...pointOf(settled(bench, planned.stepId)), stimulus, setup: station.setup });
    points++;
    const move = nextMove(recorded.assessment, previous, points, habits);
    if (move.kind === 'give-up') break;
    if (move.kind === 'leave-at') {
      // The final setting: set there and recorded, unless the trimmer already is there.
      if (move.position !== position) {
        bench.moveTrimmer(move.position);
        await call('recordTrimPoint', { runId, position: move.position, ...pointOf(settled(bench, planned.stepId)), stimulus, setup: station.setup });
      }
      break;
    }
    // Asked to record again where it already is: the points disagree, and main takes one point per
    // setting, so the technician can do no more than stop and let the trim be judged as it stands.
    if (move.position === position) break;
    previous = recorded.assessment.recommendedPosition;
    position = move.position;
    bench.moveTrimmer(position);
  }
  try {
    return await call('completeTrim', { runId, stepId: planned.stepId });
  } catch (error) {
    if (error instanceof LineCallRefused && error.channel === 'completeTrim') return null;
    throw error;
  }
}

async function checkStep(bench: HeadlessBench, planned: PlannedStep, procedure: ProcedureFile, runId: number, call: LineCalls, station: LineStation): Promise<RunDetail> {
  const step = procedure.steps[planned.index];
  if (planned.needs.kind !== 'measure' || step.kind === 'notice' || step.kind === 'trim' || step.kind === 'ringing') throw new Error(`step ${planned.stepId} is not a check step`);
  if (!planned.needs.generator) throw new LineCallRefused('recordCheckStep', `Step “${planned.stepId}” cannot be run on this station.`);
  if (planned.needs.readings.length !== 1) throw new LineCallRefused('recordCheckStep', `Step “${planned.stepId}” needs two channels; the demo unit has one.`);
  const stimulus = generatorOf(plannedStimulus(planned.needs.generator, { sampleRateHz: station.sampleRateHz, mainsHz: station.mainsHz, harmonicCount: HARMONIC_COUNT }));
  const band = step.kind === 'noise' ? noiseBandFor(step, station.sampleRateHz) : null;
  bench.setStimulus(stimulus, meterSettings(stimulus, station.mainsHz, band));
  // As the page does: the value is shown against its limits once the reading settles; a reading
  // the step refuses (not yet of the stimulus) is waited on, up to the technician's patience.
  let taken = settled(bench, planned.stepId);
  const judged = (t: SettledReading) =>
    measureCheckStep(step, { stimulus, levels: station.levels, readings: [{ channel: 1, reading: t.reading, inputDbuAtFullScale: station.levels.inputDbuAtFullScale }] }).ok;
  for (let waited = taken.seconds; !judged(taken) && waited < MAX_SETTLE_S; ) {
    const again = bench.settle(MAX_SETTLE_S - waited);
    if (!again) break;
    taken = again;
    waited += again.seconds;
  }
  return call('recordCheckStep', { runId, stepId: planned.stepId, stimulus, readings: [{ channel: 1, reading: taken.reading }], setup: station.setup });
}

/** A response step: the sweep played once through the unit and its whole answer sent to main, as the page does. */
async function responseStep(bench: HeadlessBench, planned: PlannedStep, procedure: ProcedureFile, runId: number, call: LineCalls, station: LineStation): Promise<RunDetail> {
  const step = procedure.steps[planned.index];
  if (step.kind !== 'response') throw new Error(`step ${planned.stepId} is not a response step`);
  const plan = sweepSpecFor(step, station.sampleRateHz, station.levels);
  if (!plan.ok) throw new LineCallRefused('recordResponse', plan.refusal);
  // The stimulus and half a second more: within the margin main allows.
  const samples = bench.sweep(plan.spec, logSweepLayout(plan.spec).totalLength + Math.round(0.5 * RESPONSE_CAPTURE_MARGIN_S * station.sampleRateHz));
  return call('recordResponse', { runId, stepId: planned.stepId, sampleRateHz: station.sampleRateHz, samples: Array.from(samples), setup: station.setup });
}

/**
 * A max-level step as the page walks it (useMaxLevelSequence): each level of the plan played at the
 * step's planned frequency, a settled reading taken (or a clipped one, which ends it at once), the
 * shared rules asked what follows, and the whole sequence sent to main, which runs them again.
 */
async function maxLevelStep(bench: HeadlessBench, planned: PlannedStep, procedure: ProcedureFile, runId: number, call: LineCalls, station: LineStation): Promise<RunDetail> {
  const step = procedure.steps[planned.index];
  if (step.kind !== 'max-level' || planned.needs.kind !== 'measure') throw new Error(`step ${planned.stepId} is not a max-level step`);
  const planning = maxLevelPlan(step, station.levels);
  if (!planning.ok || !planned.needs.generator) throw new LineCallRefused('recordMaxLevel', planning.ok ? `Step “${planned.stepId}” cannot be run on this station.` : planning.refusal);
  const { plan } = planning;
  const frequencyHz = plannedStimulus(planned.needs.generator, { sampleRateHz: station.sampleRateHz, mainsHz: station.mainsHz, harmonicCount: HARMONIC_COUNT }).frequencyHz;
  const points: MaxLevelPoint[] = [];
  let levelDbfs = plan.levelsDbfs[0] as number;
  for (;;) {
    const stimulus: StimulusSetting = { on: true, frequencyHz, levelDbfs };
    bench.setStimulus(stimulus, meterSettings(stimulus, station.mainsHz, null));
    const taken = bench.settle(MAX_SETTLE_S, { stopOnClipping: true });
    if (!taken) throw new LineCallRefused('recordMaxLevel', `Step “${planned.stepId}”: the simulated unit gave no reading in ${MAX_SETTLE_S} s.`);
    points.push({ stimulus, reading: taken.reading });
    const next = maxLevelNext(step, plan, station.levels, points);
    // A reading the rules refuse is sent as it is: main refuses the sequence in its own words.
    if (next.next !== 'go-on') break;
    levelDbfs = next.levelDbfs;
  }
  // The generator is muted at the end, as the page does.
  const off = { on: false, frequencyHz: 1000, levelDbfs: -120 };
  bench.setStimulus(off, meterSettings(off, station.mainsHz, null));
  return call('recordMaxLevel', { runId, stepId: planned.stepId, points, setup: station.setup });
}

/**
 * A ringing step: while the square wave plays, the technician captures the unit's output on the
 * scope, saves its export, and attaches it through main's file dialog. The demo unit's record is
 * written from its invented high-frequency behaviour (sim/demo-scope.ts) at the step's level.
 */
async function ringingStep(unit: BatchUnit, serial: string, planned: PlannedStep, runId: number, call: LineCalls, station: LineStation): Promise<RunDetail> {
  if (planned.needs.kind !== 'scope') throw new Error(`step ${planned.stepId} is not a ringing step`);
  if (!station.scopeFile) throw new LineCallRefused('attachScopeCapture', `Step “${planned.stepId}” needs an oscilloscope record, and this line has no scope.`);
  const square = planned.needs.generator;
  if (!square) throw new LineCallRefused('attachScopeCapture', `Step “${planned.stepId}” cannot play its square wave on this station.`);
  const text = demoScopeRecordText(unit.parameters, { squareHz: square.frequencyHz, levelDbu: square.levelDbfs + station.levels.outputDbuAtFullScale, seed: unit.noiseSeed });
  await station.scopeFile(serial, text);
  const attached = await call('attachScopeCapture', { runId, stepId: planned.stepId });
  if (attached.outcome !== 'recorded') throw new LineCallRefused('attachScopeCapture', `Step “${planned.stepId}”: the scope record was not attached.`);
  return attached.detail;
}

/** The settled reading, or the latest one when it never settled (main then refuses or marks it). */
function settled(bench: HeadlessBench, stepId: string): SettledReading {
  const taken = bench.settle(MAX_SETTLE_S);
  if (!taken) throw new LineCallRefused('recordTrimPoint', `Step “${stepId}”: the simulated unit gave no reading in ${MAX_SETTLE_S} s.`);
  return taken;
}

/** A trim point's reading as the page sends it: an unsettled one is recorded marked, never passed off as settled. */
function pointOf(taken: SettledReading) {
  return { reading: taken.reading, live: taken.live, unsettled: taken.reading.settled ? ('refuse' as const) : ('record-marked' as const) };
}

/** The unit's line report from the run main finished: every number as stored. */
export function lineUnitReport(unit: BatchUnit, finished: RunDetail): LineUnitReport {
  const latest = new Map(finished.stepResults.map((r) => [r.stepId, r]));
  return {
    serial: finished.run.serial,
    verdict: finished.run.verdict ?? 'fail',
    trim: { finalPosition: finished.trimPoints.at(-1)?.position ?? null, trueNullPosition: unit.trueNullTurns, points: finished.trimPoints.length },
    steps: finished.judgement.steps.map((s) => ({
      id: s.stepId,
      kind: s.kind,
      verdict: s.status,
      measurements: (latest.get(s.stepId)?.measurements ?? []).map(({ quantity, value, unit: u, low, high }) => ({ quantity, value, unit: u, low, high })),
    })),
  };
}

/** The reference tone of the demo line's calibration, as in the station's calibration step. */
const REFERENCE = { on: true, frequencyHz: 1000, levelDbfs: -20 };

/** A settled reading of the demo loopback playing `tone`, read as the page's meter reads it (one clock). */
function loopReading(chain: DemoChain, tone: StimulusSetting, sampleRateHz: number): Reading {
  chain.setStimulus(tone);
  const meter = new LiveMeter({ sampleRateHz, expectedFundamentalHz: tone.frequencyHz, stimulusLocked: true, sampleGuard: false });
  const block = new Float32Array(2048);
  for (let rendered = 0; !meter.reading.settled; rendered += block.length) {
    if (rendered > MAX_SETTLE_S * sampleRateHz) throw new Error(`the demo loopback gave no settled reading of ${tone.frequencyHz} Hz`);
    chain.render(block);
    meter.push(block);
  }
  return meter.reading;
}

/** The stepped sine's level, as the Station view's chain check plays it. */
const CHAIN_RESPONSE_LEVEL_DBFS = -12;
/** Settled readings the noise floor is averaged over (as the Station view's). */
const CHAIN_NOISE_READINGS = 6;
/** Longest round trip the latency capture covers, seconds (as the Station view's). */
const CHAIN_MAX_LATENCY_S = 0.5;

/**
 * The chain check a technician runs on the demo loopback after calibrating, for the response
 * step's correction: its residual distortion at 1 kHz, the stepped sine at the third-octave
 * frequencies (planned to whole cycles on the one clock the demo bench plays and captures on), and
 * the floor with the generator off, and the round trip from a noise burst. Main derives the
 * response and the floor's dBu again and judges the check against the station's limits.
 */
export function demoChainCheckRequest(setup: AudioSetup, calibrationId: number, operator: string, mainsHz: 50 | 60, now: Date): IpcRequest<'recordChainCheck'> {
  const rate = setup.sampleRateHz;
  const chain = new DemoChain(rate);
  const steps: ResponseStep[] = [];
  let residual: ChainCheckResult['residuals'][number] | null = null;
  for (const planned of planSteppedSine({ sampleRateHz: rate, oneClock: { mainsHz } })) {
    const reading = loopReading(chain, { on: true, frequencyHz: planned.frequencyHz, levelDbfs: CHAIN_RESPONSE_LEVEL_DBFS }, rate);
    steps.push({ frequencyHz: planned.frequencyHz, generatorDbfs: CHAIN_RESPONSE_LEVEL_DBFS, capturedDbfs: reading.fundamental.levelDbfs });
    if (planned.nominalHz === 1000) residual = { frequencyHz: planned.frequencyHz, generatorDbfs: CHAIN_RESPONSE_LEVEL_DBFS, thdDb: reading.thdDb, thdnDb: reading.thdnDb };
  }
  // The floor with the generator off: the mean power of a few settled no-signal readings, as the Station view takes it.
  chain.setStimulus({ on: false, frequencyHz: 1000, levelDbfs: -120 });
  const quiet = new LiveMeter({ sampleRateHz: rate, expectedFundamentalHz: null, stimulusLocked: true, sampleGuard: false });
  const block = new Float32Array(2048);
  let power = 0;
  let weighted = 0;
  let readings = 0;
  for (let rendered = 0, last = -1; readings < CHAIN_NOISE_READINGS; rendered += block.length) {
    if (rendered > MAX_SETTLE_S * rate) throw new Error('the demo loopback gave no settled reading with the generator off');
    chain.render(block);
    quiet.push(block);
    const r = quiet.reading;
    if (r.settled && r.sequence !== last && r.flags.includes('no-signal')) {
      last = r.sequence;
      power += 10 ** (r.noiseDbfs / 10);
      weighted += 10 ** (r.noiseAWeightedDbfs / 10);
      readings++;
    }
  }
  const noiseFloor = chainNoiseFloor(
    {
      bandLowHz: DEFAULT_ANALYZER_OPTIONS.bandLowHz,
      bandHighHz: Math.min(DEFAULT_ANALYZER_OPTIONS.bandHighHz, rate / 2),
      unweightedDbfs: 10 * Math.log10(power / readings),
      aWeightedDbfs: 10 * Math.log10(weighted / readings),
    },
    null,
  );
  const burst = latencyStimulus({ sampleRateHz: rate });
  const frames = burst.length + Math.round(CHAIN_MAX_LATENCY_S * rate);
  chain.playOnce(burst, frames);
  let captured: Float32Array | null = null;
  for (let rendered = 0; !captured; rendered += block.length) {
    if (rendered > 2 * frames) throw new Error('the demo loopback gave back no capture of the latency burst');
    chain.render(block);
    captured = chain.takeCapture();
  }
  const latency = estimateLatency(burst, captured, rate, { maxLatencyS: CHAIN_MAX_LATENCY_S });
  const response = chainResponse(steps);
  const result: ChainCheckResult = {
    schemaVersion: CHAIN_CHECK_SCHEMA_VERSION,
    measuredAt: now.toISOString(),
    sampleRateHz: rate,
    inputDbuAtFullScale: null,
    residuals: residual ? [residual] : [],
    noiseFloor,
    response: response.ok ? response.response : null,
    responseRefusal: response.ok ? null : response.reason,
    latency: latency.estimate,
    latencyRefusal: latency.estimate ? null : `Latency: ${latency.reason}`,
  };
  return { calibrationId, operator, result };
}

/**
 * The demo bench calibrated as a technician calibrates it: an invented voltmeter on the invented
 * interface's output reads the reference tone (DEMO_INTERFACE_DBU_AT_FULL_SCALE), and the
 * loopback (the invented chain) is captured through the meter for the input. Main computes and
 * judges the calibration from these observations, as from the Station view's.
 */
export function demoCalibrationRequest(setup: AudioSetup, operator: string): IpcRequest<'recordCalibration'> {
  const reading = loopReading(new DemoChain(setup.sampleRateHz), REFERENCE, setup.sampleRateHz);
  const volts = vRmsFromDbu(REFERENCE.levelDbfs + DEMO_INTERFACE_DBU_AT_FULL_SCALE);
  return {
    operator,
    setup,
    output: { referenceHz: REFERENCE.frequencyHz, referenceDbfs: REFERENCE.levelDbfs, meterEntry: `${volts.toFixed(4)} V` },
    input: { method: 'loopback', generatorDbfs: REFERENCE.levelDbfs, capturedDbfs: reading.fundamental.levelDbfs, capturedHz: reading.measuredFundamentalHz },
  };
}
