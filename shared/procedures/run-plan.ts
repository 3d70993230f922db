// The run plan: the steps a run walks, in the procedure's order, and what each needs before it can
// be judged (an acknowledgement, the trim, or a generator setting and settled readings). The page,
// main and the headless demo line walk the same plan, so none of them decides the order or the
// stimulus on its own.

import type { StimulusSetting } from '../dsp/sine-source.ts';
import { NoCoherentFrequency, planTestFrequency } from '../measurement/frequency-planner.ts';
import { generatorFor, playedLevel, whyStepCannotRun, type GeneratorRequest, type StationLevels } from './check-steps.ts';
import type { ProcedureFile, ProcedureStep } from './procedure-file.ts';
import { ringingStimulus } from './ringing.ts';

export type StepNeeds =
  | { kind: 'acknowledge'; acknowledgement: string }
  | {
      kind: 'trim';
      /** The trim's stimulus as the procedure states it (the planner may move the frequency a little). */
      generator: { on: true; frequencyHz: number; levelDbfs: number };
      limitThdDb: number;
    }
  | {
      kind: 'measure';
      /** Null when the step cannot be run on this station (see `blocked`). */
      generator: GeneratorRequest | null;
      /** One settled reading per entry, all taken with the generator as above. */
      readings: { channel: number; driven: boolean }[];
      /** For noise and hum: how the technician terminates the unit's input; null otherwise. */
      inputTermination: string | null;
      /** For noise: the band and weighting the meter must measure over; null otherwise. */
      band: { lowHz: number; highHz: number; weighting: 'unweighted' | 'A' } | null;
    }
  | {
      kind: 'scope';
      /** The square wave to play while the technician captures the unit's output; null when it cannot be played here (see `blocked`). */
      generator: StimulusSetting | null;
      /** The scope's voltage column the step reads, counted from 0. */
      channel: number;
    }
  | {
      kind: 'sweep';
      /** The sweep's band, length and level (dBFS at the generator; dBu when calibrated); null when the level cannot be played here (see `blocked`). */
      sweep: { fromHz: number; toHz: number; durationS: number; levelDbfs: number; levelDbu: number | null } | null;
      referenceHz: number;
    };

export interface PlannedStep {
  index: number;
  stepId: string;
  title: string;
  kind: ProcedureStep['kind'];
  instructions: readonly string[];
  /** What a failure does; null for a notice (nothing goes on until it is acknowledged). */
  onFail: 'stop' | 'continue' | null;
  needs: StepNeeds;
  /** Why the step cannot be run on this station now (a dBu level without calibration), or null. */
  blocked: string | null;
}

/** The ordered steps of a run of `procedure` on a station with these levels (null: uncalibrated). */
export function runPlan(procedure: Pick<ProcedureFile, 'steps'>, levels: StationLevels | null): PlannedStep[] {
  return procedure.steps.map((step, index) => {
    const base = { index, stepId: step.id, title: step.title, kind: step.kind, instructions: step.instructions };
    switch (step.kind) {
      case 'notice':
        return { ...base, onFail: null, needs: { kind: 'acknowledge', acknowledgement: step.acknowledgement }, blocked: null };
      case 'trim':
        return {
          ...base,
          onFail: step.onFail,
          needs: { kind: 'trim', generator: { on: true, frequencyHz: step.stimulusHz, levelDbfs: step.stimulusLevelDbfs }, limitThdDb: step.limitThdDb },
          blocked: null,
        };
      case 'ringing': {
        const square = ringingStimulus(step, levels);
        return {
          ...base,
          onFail: step.onFail,
          needs: { kind: 'scope', generator: square.ok ? square.stimulus : null, channel: step.channel },
          blocked: square.ok ? null : square.refusal,
        };
      }
      case 'response': {
        const level = playedLevel(step.id, step.level, levels, 0);
        const sweep = level.ok ? { fromHz: step.fromHz, toHz: step.toHz, durationS: step.durationS, levelDbfs: level.levelDbfs, levelDbu: level.levelDbu } : null;
        return { ...base, onFail: step.onFail, needs: { kind: 'sweep', sweep, referenceHz: step.referenceHz }, blocked: whyStepCannotRun(step, levels) };
      }
      default: {
        const generator = generatorFor(step, levels);
        const twoChannels = step.kind === 'balance' || step.kind === 'crosstalk';
        const readings = twoChannels
          ? [
              { channel: step.channels[0], driven: true },
              // Balance drives both channels alike; crosstalk drives the first only.
              { channel: step.channels[1], driven: step.kind === 'balance' },
            ]
          : [{ channel: 1, driven: generator.ok && generator.request.on }];
        return {
          ...base,
          onFail: step.onFail,
          needs: {
            kind: 'measure',
            generator: generator.ok ? generator.request : null,
            readings,
            inputTermination: step.kind === 'noise' || step.kind === 'hum' ? step.inputTermination : null,
            band: step.kind === 'noise' ? { ...step.band, weighting: step.weighting } : null,
          },
          blocked: whyStepCannotRun(step, levels),
        };
      }
    }
  });
}

/**
 * Whether the step being measured wants the generator playing: off for a notice (nothing is played
 * before the safety notice is acknowledged) and for noise and hum, on for the trim and for checks
 * that play a tone. Null when no step is being measured, or the step cannot run on this station:
 * then the generator is the technician's to use.
 */
export function generatorWanted(step: Pick<PlannedStep, 'needs'> | null): boolean | null {
  if (!step) return null;
  switch (step.needs.kind) {
    case 'acknowledge':
      return false;
    case 'trim':
      return true;
    case 'measure':
    case 'scope':
      return step.needs.generator ? step.needs.generator.on : null;
    case 'sweep':
      // The tone generator stays off: the sweep is played on its own, once, when the technician starts it.
      return false;
  }
}

export interface PlannedStimulus extends StimulusSetting {
  /** Why this frequency: the planner's reason, or why the step's own frequency is used as it is. */
  reason: string;
}

/**
 * The generator setting for a step on this station: the step's frequency moved by the planner to a
 * whole number of cycles clear of mains (within the planner's default 1 %, well inside what the
 * stimulus check allows), or the step's own frequency, analysed windowed, when no such frequency
 * exists. Off stays off.
 */
export function plannedStimulus(request: GeneratorRequest, station: { sampleRateHz: number; mainsHz: 50 | 60; harmonicCount: number }): PlannedStimulus {
  if (!request.on) return { on: false, frequencyHz: 1000, levelDbfs: -120, reason: 'The generator is off for this step.' };
  try {
    const plan = planTestFrequency({ targetHz: request.frequencyHz, sampleRateHz: station.sampleRateHz, mainsHz: station.mainsHz, harmonicCount: station.harmonicCount });
    return { on: true, frequencyHz: plan.frequencyHz, levelDbfs: request.levelDbfs, reason: plan.reason };
  } catch (error) {
    if (!(error instanceof NoCoherentFrequency)) throw error;
    return { on: true, frequencyHz: request.frequencyHz, levelDbfs: request.levelDbfs, reason: error.message };
  }
}
