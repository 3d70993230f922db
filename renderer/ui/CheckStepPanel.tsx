import { useRef, useState, type RefObject } from 'react';
import type { StimulusSettingRequest } from '../../shared/ipc/contract.ts';
import { formatLevel, type LevelCalibration } from '../../shared/levels.ts';
import type { Reading } from '../../shared/measurement/reading.ts';
import { CHECK_FREQUENCY_TOLERANCE_PERCENT, measureCheckStep, type StationLevels } from '../../shared/procedures/check-steps.ts';
import type { CheckStep } from '../../shared/procedures/procedure-file.ts';
import type { PlannedStep } from '../../shared/procedures/run-plan.ts';
import type { GeneratorCommand } from '../worker/messages.ts';
import { problemText } from '../problem-text.ts';
import { fixed } from './format.ts';
import { MeasurementsTable } from './MeasurementsTable.tsx';

// A reading older than this is not recorded: the stream has stopped.
const STALE_READING_MS = 2000;

/** This build captures and analyses one input channel. */
export const ONE_CHANNEL_BUILD =
  'This build measures one input channel only, so this two-channel step cannot be measured here. Measure it on a station that reads both channels, or finish the run as FAIL.';

/** Two presses of Enter closer than this are one impatient press (common practice for debouncing a double key press). */
const DOUBLE_PRESS_MS = 500;
/** When the primary action was last pressed, on whichever step: the next step's panel sees the same time. */
let lastPrimaryAt = Number.NEGATIVE_INFINITY;

/**
 * A check step being measured: the generator as the step plans it (off for noise and hum, with the
 * termination instruction), a settled reading awaited with its progress and time left, each limited
 * quantity live against its limits (the same judgement main makes when it is recorded), and Enter
 * to record it.
 */
export function CheckStepPanel({
  step,
  planned,
  reading,
  readingAt,
  generator,
  generatorAvailable,
  onToggleGenerator,
  levels,
  inputDbuAtFullScale,
  outputCalibration,
  stimulusNote,
  pending,
  primaryRef,
  onRecord,
}: {
  step: CheckStep;
  planned: PlannedStep;
  reading: Reading | null;
  readingAt: number;
  generator: GeneratorCommand;
  generatorAvailable: boolean;
  onToggleGenerator(): void;
  levels: StationLevels | null;
  inputDbuAtFullScale: number | null;
  outputCalibration: LevelCalibration | null;
  stimulusNote: string | null;
  /** A call to main is in flight: Enter does nothing more until it answers. */
  pending: boolean;
  primaryRef: RefObject<HTMLButtonElement | null>;
  onRecord(stimulus: StimulusSettingRequest, readings: { channel: number; reading: Reading }[]): Promise<unknown>;
}) {
  const [message, setMessage] = useState<string | null>(null);
  // The reading last sent: a second Enter on the same reading must not record it again.
  const recorded = useRef<Reading | null>(null);
  const needs = planned.needs.kind === 'measure' ? planned.needs : null;
  const wantsTone = needs?.generator?.on === true;
  const twoChannels = step.kind === 'balance' || step.kind === 'crosstalk';

  if (planned.blocked || twoChannels || !needs) {
    return (
      <p className="problem" role="alert" data-testid="step-blocked">
        {planned.blocked ?? ONE_CHANNEL_BUILD}
      </p>
    );
  }

  const stale = reading !== null && Date.now() - readingAt > STALE_READING_MS;
  // The live preview judges the reading as if it had settled, so the value shows against its
  // limits while it settles; only a settled reading is recorded.
  const preview = reading && !stale ? measureCheckStep(step, { stimulus: generator, levels, readings: [{ channel: 1, reading: { ...reading, settled: true }, inputDbuAtFullScale }] }) : null;
  // Until the generator plays this step's tone (a moment after the step opens, or after Esc), Enter turns it on.
  const request = needs.generator;
  const playingThisStep =
    generator.on &&
    request?.on === true &&
    generator.levelDbfs === request.levelDbfs &&
    (100 * Math.abs(generator.frequencyHz - request.frequencyHz)) / request.frequencyHz <= CHECK_FREQUENCY_TOLERANCE_PERCENT;
  const waitingForTone = wantsTone && !playingThisStep;

  async function primary() {
    if (pending) return;
    // An impatient second Enter lands on the next step once the first has recorded: it must not
    // turn that step's tone on (a loud tone nobody asked for), so a press this soon after the last
    // one is taken as the same press.
    const now = performance.now();
    const tooSoon = now - lastPrimaryAt < DOUBLE_PRESS_MS;
    lastPrimaryAt = now;
    if (tooSoon) return;
    if (waitingForTone) {
      if (!generatorAvailable) return setMessage('Start capture (Audio interface) first: the generator plays through it.');
      setMessage(null);
      return onToggleGenerator();
    }
    if (!wantsTone && generator.on) return setMessage('The generator is on: this step measures the unit with it off. Press Esc to mute it.');
    if (!reading) return setMessage('There is no reading yet: start capture and wait for it.');
    if (stale) return setMessage('No new reading for a while: the capture has stopped delivering. Check the interface, then start capture again.');
    if (!reading.settled) return setMessage('Not recorded: the reading has not settled yet. Wait for “settled”, then press Enter.');
    if (reading === recorded.current) return setMessage('This reading is already recorded. Wait for the next reading.');
    if (preview && !preview.ok) return setMessage(preview.refusal);
    setMessage(null);
    try {
      const answered = await onRecord(generator, [{ channel: 1, reading }]);
      if (answered !== null) recorded.current = reading;
    } catch (error) {
      // Main's refusal, as it came.
      setMessage(problemText(error, 'The step was not recorded', 'Press Enter to record it again.'));
    }
  }

  return (
    <div className="check-step" data-testid="check-step" data-kind={step.kind}>
      {needs.inputTermination && (
        <p className="termination" data-testid="termination">
          <strong>Generator off.</strong> {needs.inputTermination}
        </p>
      )}
      {wantsTone && needs.generator?.on && (
        <p className="caution" data-testid="tone-caution">
          Plays {fixed(generator.frequencyHz, generator.frequencyHz < 100 ? 2 : 1)} Hz at {formatLevel(needs.generator.levelDbfs, outputCalibration)}
          {generator.frequencyHz < 100 ? ': a loud low-frequency tone' : ''}. Keep monitor speakers and headphones muted; <kbd>Esc</kbd> mutes it at once.
        </p>
      )}
      {stimulusNote && wantsTone && <p className="hint">{stimulusNote}</p>}
      <div className="row generator-row">
        <span className={generator.on ? 'badge live' : 'badge'}>{generator.on ? 'Generator ON' : 'Generator off'}</span>
        {wantsTone && (
          <button type="button" onClick={onToggleGenerator} disabled={!generatorAvailable} data-testid="check-generator-toggle">
            {generator.on ? 'Turn off (G)' : 'Turn on (G)'}
          </button>
        )}
      </div>
      <Settle reading={waitingForTone ? null : reading} />
      {preview?.ok && !waitingForTone && <MeasurementsTable measurements={preview.result.measurements} live />}
      {preview && !preview.ok && !waitingForTone && reading?.settled && (
        <p className="hint" data-testid="check-preview-refusal">
          {preview.refusal}
        </p>
      )}
      <div className="row">
        <button type="button" className="primary" ref={primaryRef} autoFocus onClick={() => void primary()} disabled={pending} data-testid="check-primary" data-step-primary>
          {waitingForTone ? 'Turn on the generator (Enter)' : 'Record the step (Enter)'}
        </button>
      </div>
      <p className="problem" role="alert" hidden={message === null} data-testid="check-message">
        {message}
      </p>
      <p className="hint">The spectrum beside shows the tone and what the unit adds to it.</p>
    </div>
  );
}

/** Progress toward a settled reading, and the time left. */
function Settle({ reading }: { reading: Reading | null }) {
  if (!reading) return <p className="hint" data-testid="check-settle">Waiting for a reading…</p>;
  const left =
    reading.settled ? 'Settled: press Enter to record.' : reading.settleRemainingS === null ? 'Waiting for a steady reading…' : `About ${Math.max(1, Math.ceil(reading.settleRemainingS))} s left.`;
  return (
    <div className="settle" data-testid="check-settle" data-settled={reading.settled}>
      <progress max={1} value={reading.settled ? 1 : reading.settleProgress} aria-label="Progress toward a settled reading" />
      <span className="hint">
        {reading.settled ? 'settled' : `settling ${Math.round(reading.settleProgress * 100)} %`} · {left}
      </span>
    </div>
  );
}
