// The chain check as the technician runs it: output looped to input, the generator stepped through
// the residual points, the stepped sine, then off for the noise floor, then one latency burst.
// Each tone step waits for a settled reading of that very frequency; every step has a time limit
// that names it. Stop (or Esc) aborts at once: the generator is muted and nothing is kept.

import { useCallback, useEffect, useRef, useState } from 'react';
import { chainNoiseFloor, CHAIN_CHECK_SCHEMA_VERSION, type ChainCheckResult, type ResidualDistortion } from '../../shared/calibration/chain-check.ts';
import { chainResponse, ISO_266_THIRD_OCTAVE_HZ, planSteppedSine, RESPONSE_REFERENCE_HZ, type ResponseStep } from '../../shared/calibration/chain-response.ts';
import { estimateLatency, latencyStimulus } from '../../shared/calibration/latency.ts';
import { DEFAULT_ANALYZER_OPTIONS } from '../../shared/measurement/frame-analyzer.ts';
import { frameSizeFor } from '../../shared/measurement/live-meter.ts';
import type { Reading } from '../../shared/measurement/reading.ts';
import type { StoredProcedure } from '../../shared/ipc/contract.ts';
import type { BenchAudio } from '../audio/bench-audio.ts';
import type { GeneratorCommand } from '../worker/messages.ts';
import { problemText } from '../problem-text.ts';

/** A tone's answer counts as the generator's when its measured fundamental is this close to it (percent). */
export const FREQUENCY_MATCH_PERCENT = 1;
/** The working level when no procedure names one, dBFS. */
export const DEFAULT_WORKING_DBFS = -12;
/** Level of the stepped sine, dBFS: well clear of clipping, well above the floor. */
export const RESPONSE_LEVEL_DBFS = -12;
/** Longest delay the latency capture covers, seconds. */
export const MAX_LATENCY_S = 0.5;
// Readings arriving this soon after a command were on their way before it (a settled reading
// needs a hold-off, a frame and three agreeing readings: far longer).
const STALE_MS = 200;
/** No-signal readings averaged for the noise floor. */
const NOISE_READINGS = 6;

export type ResponseSpacing = 'third-octave' | 'octave';

export interface WorkingPoint {
  frequencyHz: number;
  levelDbfs: number;
  /** Where it comes from: a procedure's name, or "1 kHz at the working level". */
  source: string;
}

export interface ChainCheckPlan {
  residuals: WorkingPoint[];
  noise: boolean;
  response: ResponseSpacing | null;
  latency: boolean;
}

/** Each procedure's trim stimulus, and 1 kHz at the highest of their levels (one entry per frequency and level). */
export function workingPoints(procedures: readonly StoredProcedure[]): WorkingPoint[] {
  const points: WorkingPoint[] = [];
  const add = (p: WorkingPoint) => {
    if (!points.some((q) => q.frequencyHz === p.frequencyHz && q.levelDbfs === p.levelDbfs)) points.push(p);
  };
  for (const procedure of procedures) {
    const trim = procedure.definition.trim;
    add({ frequencyHz: trim.stimulusHz, levelDbfs: trim.stimulusLevelDbfs, source: `${procedure.definition.code} ${procedure.definition.title}` });
  }
  const working = points.length > 0 ? Math.max(...points.map((p) => p.levelDbfs)) : DEFAULT_WORKING_DBFS;
  add({ frequencyHz: RESPONSE_REFERENCE_HZ, levelDbfs: working, source: '1 kHz at the working level' });
  return points;
}

/**
 * The stepped sine's frequencies: every ISO 266 third octave from 10 Hz to 20 kHz (or 0.45 × the
 * sample rate), or octaves of 1 kHz plus the band's ends and 20 Hz, so flatness from 20 Hz is judged.
 */
export function responseFrequencies(sampleRateHz: number, spacing: ResponseSpacing): number[] {
  const all = planSteppedSine({ sampleRateHz }).map((s) => s.frequencyHz);
  if (spacing === 'third-octave') return all;
  const reference = ISO_266_THIRD_OCTAVE_HZ.indexOf(RESPONSE_REFERENCE_HZ);
  return all.filter((f, i) => {
    const third = ISO_266_THIRD_OCTAVE_HZ.indexOf(f);
    return i === 0 || i === all.length - 1 || f === 20 || (third - reference) % 3 === 0;
  });
}

/** Seconds a settled reading of `hz` takes at best: hold-off, one frame, two more readings, and a little slack. */
export function secondsForTone(sampleRateHz: number, hz: number): number {
  return 0.25 + frameSizeFor(sampleRateHz, hz) / sampleRateHz + 2 / 6 + 0.4;
}

/** Time limit of one tone step, seconds: 20 s, longer below 20 Hz where frames are long. */
export function toneTimeoutS(hz: number): number {
  return Math.min(40, Math.max(20, (20 * 20) / hz));
}

export interface ChainCheckProgress {
  step: string;
  index: number;
  total: number;
  secondsLeft: number;
}

export type ChainCheckRunState =
  | { state: 'idle' }
  | { state: 'running'; progress: ChainCheckProgress }
  | { state: 'finished'; result: ChainCheckResult }
  | { state: 'stopped'; message: string }
  | { state: 'failed'; message: string };

class StepFailed extends Error {}
class Aborted extends Error {}

interface Waiter {
  check(reading: Reading, at: number): void;
}

export interface ChainCheckInputs {
  audio: BenchAudio | null;
  reading: Reading | null;
  readingAt: number;
  applyGenerator(command: GeneratorCommand): void;
  mute(): void;
  /** Input channel (0-based) for the latency capture. */
  channel: number;
  inputDbuAtFullScale: number | null;
}

export function useChainCheck(inputs: ChainCheckInputs) {
  const [run, setRun] = useState<ChainCheckRunState>({ state: 'idle' });
  const waiters = useRef(new Set<Waiter>());
  const abortRef = useRef<AbortController | null>(null);
  const latest = useRef(inputs);
  latest.current = inputs;

  // Every new reading goes to whoever waits for one.
  useEffect(() => {
    if (!inputs.reading) return;
    for (const waiter of [...waiters.current]) waiter.check(inputs.reading, inputs.readingAt);
  }, [inputs.reading, inputs.readingAt]);

  const stop = useCallback((message = 'Chain check stopped: the generator is muted and nothing was stored.') => {
    const controller = abortRef.current;
    if (!controller) return;
    latest.current.mute();
    controller.abort(new Aborted(message));
  }, []);

  const start = useCallback(async (plan: ChainCheckPlan) => {
    const audio = latest.current.audio;
    if (!audio) {
      setRun({ state: 'failed', message: 'Capture is not running. Press Start capture with the output looped to the input, then run the chain check.' });
      return;
    }
    const controller = new AbortController();
    abortRef.current = controller;
    const signal = controller.signal;
    const sampleRateHz = audio.sampleRateHz;
    const responseHz = plan.response ? responseFrequencies(sampleRateHz, plan.response) : [];
    type Step = { label: string; estimateS: number };
    const steps: Step[] = [
      ...plan.residuals.map((p) => ({ label: `Residual at ${hzText(p.frequencyHz)}, ${dbText(p.levelDbfs)} dBFS`, estimateS: secondsForTone(sampleRateHz, p.frequencyHz) })),
      ...responseHz.map((f) => ({ label: `Response at ${hzText(f)}`, estimateS: secondsForTone(sampleRateHz, f) })),
      ...(plan.noise ? [{ label: 'Noise floor, generator off', estimateS: 2.5 }] : []),
      ...(plan.latency ? [{ label: 'Round-trip latency', estimateS: 1.5 }] : []),
    ];
    let stepIndex = 0;
    let stepStartedAt = Date.now();
    const report = () => {
      const step = steps[stepIndex];
      const rest = steps.slice(stepIndex + 1).reduce((sum, s) => sum + s.estimateS, 0);
      const current = Math.max(0, step.estimateS - (Date.now() - stepStartedAt) / 1000);
      setRun({ state: 'running', progress: { step: step.label, index: stepIndex, total: steps.length, secondsLeft: current + rest } });
    };
    const begin = (index: number) => {
      if (signal.aborted) throw signal.reason;
      stepIndex = index;
      stepStartedAt = Date.now();
      report();
    };
    const ticker = setInterval(report, 500);

    // Afterwards the generator rests, muted, at 1 kHz and the working level: the next Turn on must
    // not play the last step (a 20 kHz tone) into whatever is connected by then.
    const restGenerator = (p: ChainCheckPlan) => {
      const level = p.residuals.length > 0 ? Math.max(...p.residuals.map((r) => r.levelDbfs)) : DEFAULT_WORKING_DBFS;
      latest.current.applyGenerator({ frequencyHz: RESPONSE_REFERENCE_HZ, levelDbfs: level, on: false });
    };

    /** The first reading after `since` that `accept` takes, or a StepFailed naming the step after `timeoutS`. */
    const nextReading = (accept: (r: Reading) => boolean, since: number, timeoutS: number, timeoutMessage: () => string) =>
      new Promise<Reading>((resolve, reject) => {
        const waiter: Waiter = {
          check(reading, at) {
            if (at < since + STALE_MS || !accept(reading)) return;
            finish();
            resolve(structuredClone(reading));
          },
        };
        const timer = setTimeout(() => {
          finish();
          reject(new StepFailed(timeoutMessage()));
        }, timeoutS * 1000);
        const onAbort = () => {
          finish();
          reject(signal.reason);
        };
        const finish = () => {
          clearTimeout(timer);
          waiters.current.delete(waiter);
          signal.removeEventListener('abort', onAbort);
        };
        waiters.current.add(waiter);
        signal.addEventListener('abort', onAbort);
      });

    /** Plays a tone and returns the first settled reading of it. */
    const settledTone = async (frequencyHz: number, levelDbfs: number): Promise<Reading> => {
      latest.current.applyGenerator({ frequencyHz, levelDbfs, on: true });
      const since = Date.now();
      const timeoutS = toneTimeoutS(frequencyHz);
      let lastSeen: Reading | null = null;
      const accept = (r: Reading) => {
        lastSeen = r;
        return (
          r.settled &&
          !r.flags.includes('no-signal') &&
          Math.abs(r.measuredFundamentalHz - frequencyHz) <= (frequencyHz * FREQUENCY_MATCH_PERCENT) / 100
        );
      };
      const timeoutMessage = () => {
          const seen = lastSeen as Reading | null;
          const what = !seen || seen.flags.includes('no-signal')
            ? 'no signal came back'
            : `the input read ${hzText(seen.measuredFundamentalHz)}${seen.settled ? '' : ', not settled'}`;
          return `No settled reading of ${hzText(frequencyHz)} within ${timeoutS} s (${what}): check the loop cable from the output to input channel ${latest.current.channel + 1}, then run the chain check again.`;
      };
      const first = await nextReading(accept, since, timeoutS, timeoutMessage);
      // The reading after the first settled one: its frame lies a hop further from whatever came
      // before the tone (a settled trio's oldest frame may still hold a sliver of it).
      return nextReading(accept, Date.now() - STALE_MS, 2, timeoutMessage).catch((error: unknown) => {
        if (error instanceof StepFailed) return first;
        throw error;
      });
    };

    try {
      const residuals: ResidualDistortion[] = [];
      let index = 0;
      for (const point of plan.residuals) {
        begin(index++);
        const r = await settledTone(point.frequencyHz, point.levelDbfs);
        residuals.push({ frequencyHz: point.frequencyHz, generatorDbfs: point.levelDbfs, thdDb: r.thdDb, thdnDb: r.thdnDb });
      }
      const responseSteps: ResponseStep[] = [];
      for (const f of responseHz) {
        begin(index++);
        const r = await settledTone(f, RESPONSE_LEVEL_DBFS);
        responseSteps.push({ frequencyHz: f, generatorDbfs: RESPONSE_LEVEL_DBFS, capturedDbfs: r.fundamental.levelDbfs });
      }

      let noiseFloor: ChainCheckResult['noiseFloor'] = null;
      if (plan.noise) {
        begin(index++);
        latest.current.mute();
        const since = Date.now();
        let power = 0;
        let weighted = 0;
        let toneSeen: Reading | null = null;
        for (let n = 0; n < NOISE_READINGS; n++) {
          // A settled no-signal reading (analysed after the break, its noise steady) carries the band's noise.
          const r = await nextReading(
            (reading) => {
              if (!reading.flags.includes('no-signal')) toneSeen = reading;
              return reading.flags.includes('no-signal') && reading.settled;
            },
            since,
            15,
            () => {
              const seen = toneSeen as Reading | null;
              return seen
                ? `Noise floor: a tone of ${hzText(seen.measuredFundamentalHz)} at ${seen.fundamental.levelDbfs.toFixed(1)} dBFS is on the input with the generator off; find what feeds the input (another output, a hum loop), then run the chain check again.`
                : 'Noise floor: no reading came within 15 s with the generator off; check that capture is running, then run the chain check again.';
            },
          );
          power += 10 ** (r.noiseDbfs / 10);
          weighted += 10 ** (r.noiseAWeightedDbfs / 10);
          // Wait for the next reading, not the same one again.
          await nextReading(() => true, Date.now() - STALE_MS, 5, () => 'Noise floor: readings stopped coming; check that capture is running.');
        }
        noiseFloor = chainNoiseFloor(
          {
            bandLowHz: DEFAULT_ANALYZER_OPTIONS.bandLowHz,
            bandHighHz: Math.min(DEFAULT_ANALYZER_OPTIONS.bandHighHz, sampleRateHz / 2),
            // Mean power over the readings: the floor as a meter averaging longer would read it.
            unweightedDbfs: 10 * Math.log10(power / NOISE_READINGS),
            aWeightedDbfs: 10 * Math.log10(weighted / NOISE_READINGS),
          },
          latest.current.inputDbuAtFullScale === null ? null : { dbuAtFullScale: latest.current.inputDbuAtFullScale },
        );
      }

      let latency: ChainCheckResult['latency'] = null;
      let latencyRefusal: string | null = null;
      if (plan.latency) {
        begin(index++);
        latest.current.mute();
        await delay(300, signal); // the generator's ramp down and the loop's tail
        const stimulus = latencyStimulus({ sampleRateHz });
        const captured = await raceAbort(
          audio.captureRoundTrip(stimulus, stimulus.length + Math.round(MAX_LATENCY_S * sampleRateHz), latest.current.channel),
          signal,
        );
        const outcome = estimateLatency(stimulus, captured, sampleRateHz, { maxLatencyS: MAX_LATENCY_S });
        latency = outcome.estimate;
        latencyRefusal = outcome.estimate ? null : `Latency: ${outcome.reason}`;
      } else {
        latencyRefusal = 'The latency was not measured in this run.';
      }

      const response = responseSteps.length > 0 ? chainResponse(responseSteps) : null;
      const result: ChainCheckResult = {
        schemaVersion: CHAIN_CHECK_SCHEMA_VERSION,
        measuredAt: new Date().toISOString(),
        sampleRateHz,
        inputDbuAtFullScale: latest.current.inputDbuAtFullScale,
        residuals,
        noiseFloor,
        response: response?.ok ? response.response : null,
        responseRefusal: response === null ? 'The frequency response was not measured in this run.' : response.ok ? null : response.reason,
        latency,
        latencyRefusal,
      };
      latest.current.mute();
      restGenerator(plan);
      setRun({ state: 'finished', result });
    } catch (error) {
      latest.current.mute();
      restGenerator(plan);
      if (error instanceof Aborted) setRun({ state: 'stopped', message: error.message });
      else if (error instanceof StepFailed) setRun({ state: 'failed', message: `${error.message} Nothing was stored.` });
      else setRun({ state: 'failed', message: problemText(error, 'The chain check stopped', 'Nothing was stored; run it again.') });
    } finally {
      clearInterval(ticker);
      abortRef.current = null;
    }
  }, []);

  // Leaving the panel mid-run is a stop.
  useEffect(() => () => stop(), [stop]);

  const reset = useCallback(() => setRun({ state: 'idle' }), []);
  return { run, start, stop, reset };
}

function delay(ms: number, signal: AbortSignal): Promise<void> {
  return new Promise((resolve, reject) => {
    const timer = setTimeout(() => {
      signal.removeEventListener('abort', onAbort);
      resolve();
    }, ms);
    const onAbort = () => {
      clearTimeout(timer);
      reject(signal.reason);
    };
    signal.addEventListener('abort', onAbort, { once: true });
  });
}

function raceAbort<T>(promise: Promise<T>, signal: AbortSignal): Promise<T> {
  return new Promise((resolve, reject) => {
    const onAbort = () => reject(signal.reason);
    if (signal.aborted) return onAbort();
    signal.addEventListener('abort', onAbort, { once: true });
    promise.then(resolve, reject).finally(() => signal.removeEventListener('abort', onAbort));
  });
}

/** A dB figure with a true minus sign. */
export function dbText(db: number): string {
  return String(db).replace('-', '−');
}

export function hzText(hz: number): string {
  return hz >= 1000 ? `${Number((hz / 1000).toPrecision(4))} kHz` : `${Number(hz.toPrecision(4))} Hz`;
}
