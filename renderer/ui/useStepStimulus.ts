import { useEffect, useState } from 'react';
import { NoCoherentFrequency, planTestFrequency } from '../../shared/measurement/frequency-planner.ts';
import { generatorWanted, plannedStimulus, type PlannedStep } from '../../shared/procedures/run-plan.ts';
import { problemText } from '../problem-text.ts';
import type { GeneratorCommand } from '../worker/messages.ts';

export const HARMONIC_COUNT = 10;

/**
 * The generator follows the run's current step: silent for a notice and for noise and hum, the
 * trim's stimulus for the trim, the step's planned tone for a check. A new step never starts
 * playing by itself: the technician turns the tone on. Returns why the frequency is what it is.
 */
export function useStepStimulus({
  runId,
  step,
  sharedClock,
  sampleRateHz,
  mainsHz,
  apply,
  mute,
  current,
}: {
  /** A new unit starts its steps afresh, even at a step of the same id. */
  runId: number | null;
  step: PlannedStep | null;
  sharedClock: boolean;
  /** The rate capture runs at, or the chosen one before it starts. */
  sampleRateHz: number;
  mainsHz: 50 | 60;
  apply(command: GeneratorCommand): void;
  mute(): void;
  current(): GeneratorCommand;
}): string | null {
  const [note, setNote] = useState<string | null>(null);
  const needs = step?.needs ?? null;
  // The step's setting is part of its key: a calibration that comes to hold (or lapses) changes it.
  const setting = needs && needs.kind !== 'acknowledge' && needs.kind !== 'sweep' ? (needs.generator?.on ? `${needs.kind === 'scope' ? 'square' : 'sine'}:${needs.generator.frequencyHz}@${needs.generator.levelDbfs}` : 'off') : 'none';
  const stepKey = step ? `${runId}/${step.stepId}/${setting}` : null;

  // A new step: its setting, off.
  useEffect(() => {
    if (!needs) return;
    if (needs.kind === 'acknowledge' || needs.kind === 'sweep' || generatorWanted(step) !== true) {
      setNote(null);
      return mute();
    }
    const target = needs.generator;
    if (!target?.on) return;
    apply({ frequencyHz: target.frequencyHz, levelDbfs: target.levelDbfs, on: false, ...(needs.kind === 'scope' ? { waveform: 'square' as const } : {}) });
  }, [stepKey]); // eslint-disable-line react-hooks/exhaustive-deps

  // On one interface clock the stimulus is planned to whole cycles per frame, clear of mains;
  // planned again whenever the rate, the mains or the clocking changes.
  useEffect(() => {
    if (!needs || needs.kind === 'acknowledge' || needs.kind === 'sweep') return;
    const request = needs.generator;
    if (!request || !request.on) return;
    const move = (frequencyHz: number) => {
      const now = current();
      if (now.frequencyHz !== frequencyHz || now.levelDbfs !== request.levelDbfs) apply({ ...now, frequencyHz, levelDbfs: request.levelDbfs });
    };
    if (needs.kind === 'scope') {
      // The square is played at the step's own frequency: the scope, not the meter, reads the unit.
      setNote(null);
      return move(request.frequencyHz);
    }
    if (needs.kind === 'measure') {
      // A check step's tone is always planned clear of mains (plannedStimulus), as main re-judges it.
      const planned = plannedStimulus(needs.generator!, { sampleRateHz, mainsHz, harmonicCount: HARMONIC_COUNT });
      setNote(planned.reason);
      return move(planned.frequencyHz);
    }
    if (!sharedClock) {
      setNote(null);
      return move(request.frequencyHz);
    }
    try {
      const plan = planTestFrequency({ targetHz: request.frequencyHz, sampleRateHz, mainsHz, harmonicCount: HARMONIC_COUNT });
      setNote(plan.reason);
      move(plan.frequencyHz);
    } catch (error) {
      // Nothing coherent lies close enough to the procedure's frequency: play it exactly, analysed windowed.
      // The planner's NoCoherentFrequency explains itself; any other throw is a bug, kept off the bench.
      const why = error instanceof NoCoherentFrequency ? error.message : problemText(error, 'no coherent frequency was planned', 'Nothing to do.');
      setNote(`Playing the procedure's ${request.frequencyHz} Hz exactly, analysed windowed: ${why}`);
      move(request.frequencyHz);
    }
  }, [stepKey, sharedClock, mainsHz, sampleRateHz, apply, current]); // eslint-disable-line react-hooks/exhaustive-deps

  return note;
}
