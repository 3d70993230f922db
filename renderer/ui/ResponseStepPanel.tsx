// A response step: the caution, the sweep played once with its progress, then main's judgement.
// The result itself (plot and verdict) shows as the step's stored result once main has recorded it.

import { useCallback, useRef, useState, type RefObject } from 'react';
import { formatLevel, type LevelCalibration } from '../../shared/levels.ts';
import type { PlannedStep } from '../../shared/procedures/run-plan.ts';
import type { ResponseStep } from '../../shared/procedures/response.ts';
import { sweepSpecFor } from '../../shared/procedures/response.ts';
import type { StationLevels } from '../../shared/procedures/check-steps.ts';
import { hzText } from '../../shared/procedures/step-text.ts';
import type { BenchAudio } from '../audio/bench-audio.ts';
import { fixed } from './format.ts';
import { DOUBLE_PRESS_MS, secondPressTooSoon } from './primary-press.ts';
import { useResponseSweep } from './useResponseSweep.ts';

export function ResponseStepPanel({
  step,
  planned,
  audio,
  onSweeping,
  levels,
  outputCalibration,
  pending,
  primaryRef,
  onRecord,
}: {
  step: ResponseStep;
  planned: PlannedStep;
  /** The running capture, or null when capture has not started. */
  audio: BenchAudio | null;
  onSweeping(playing: boolean): void;
  levels: StationLevels | null;
  outputCalibration: LevelCalibration | null;
  pending: boolean;
  primaryRef: RefObject<HTMLButtonElement | null>;
  onRecord(samples: Float32Array, sampleRateHz: number): Promise<unknown>;
}) {
  const send = useCallback((samples: Float32Array, rate: number) => onRecord(samples, rate), [onRecord]);
  const { state, start } = useResponseSweep(audio, send, onSweeping);
  const [message, setMessage] = useState<string | null>(null);
  // An Enter that arrives with the panel (the notice's, pressed twice) must not start a loud sweep.
  const shownAt = useRef(performance.now());
  const needs = planned.needs.kind === 'sweep' ? planned.needs : null;
  if (planned.blocked || !needs?.sweep) {
    return (
      <p className="problem" role="alert" data-testid="step-blocked">
        {planned.blocked ?? 'This step cannot be run on this station.'}
      </p>
    );
  }
  const plan = audio ? sweepSpecFor(step, audio.sampleRateHz, levels) : null;
  const playing = state.phase === 'playing';
  const busy = playing || state.phase === 'analysing' || pending;

  function primary() {
    if (busy || secondPressTooSoon() || performance.now() - shownAt.current < DOUBLE_PRESS_MS) return;
    if (!audio || !plan) return setMessage('Start capture (Audio interface) first: the sweep plays through it and its answer is captured.');
    if (!plan.ok) return setMessage(plan.refusal);
    setMessage(null);
    void start(plan.spec);
  }

  const level = formatLevel(needs.sweep.levelDbfs, outputCalibration);
  return (
    <div className="check-step response-step" data-testid="response-step" data-phase={state.phase}>
      <p className="caution" data-testid="sweep-caution">
        Sweeps {hzText(plan?.ok ? plan.spec.startHz : step.fromHz)} to {hzText(step.toHz)} in {fixed(plan?.ok ? plan.spec.durationS : step.durationS, 1)} s at {level}, starting
        at the lowest frequency, an octave below the band judged{step.fromHz < 100 ? ': a loud low-frequency tone at first' : ''}. Keep monitor speakers and headphones muted; <kbd>Esc</kbd> stops it at once.
      </p>
      <p className="hint">
        The response is read relative to {hzText(step.referenceHz)} and judged against the step's mask; the unit's channel 1 is captured for the whole
        sweep{plan?.ok ? ` (${fixed(plan.totalS, 1)} s with the silences)` : ''}. Leave the unit and the cables alone while it plays.
      </p>
      {playing && (
        <div className="settle" data-testid="sweep-progress">
          <progress max={1} value={state.fraction} aria-label="Sweep progress" />
          <span className="hint">
            Sweeping · {Math.round(state.fraction * 100)} % · about {Math.max(1, Math.ceil(state.secondsLeft))} s left · <kbd>Esc</kbd> stops
          </span>
          <span className="hint">The live reading beside follows the sweep as it passes: it is not this step's measurement.</span>
        </div>
      )}
      {state.phase === 'analysing' && (
        <p className="hint" data-testid="sweep-analysing">
          Sweep captured. The station is analysing and judging the response…
        </p>
      )}
      <div className="row">
        <button type="button" className="primary" ref={primaryRef} autoFocus onClick={primary} disabled={busy} data-testid="sweep-primary" data-step-primary>
          {playing ? 'Sweeping…' : state.phase === 'stopped' ? 'Run the sweep again (Enter)' : 'Play the sweep (Enter)'}
        </button>
        {playing && (
          <button type="button" className="warn" onClick={() => audio?.stopSweep()} data-testid="sweep-stop">
            Stop (Esc)
          </button>
        )}
      </div>
      <p className="problem" role="alert" hidden={message === null && state.phase !== 'stopped'} data-testid="sweep-message">
        {message ?? (state.phase === 'stopped' ? state.message : null)}
      </p>
    </div>
  );
}
