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
import { secondPressTooSoon } from './primary-press.ts';

// A reading older than this is not recorded: the stream has stopped.
const STALE_READING_MS = 2000;

/** The unit channels this station reads: channel 1 on the input chosen for the unit, channel 2 on the second input. */
const CHANNELS_READ = [1, 2];

/** A reading of one of the unit's channels as it arrived. */
export interface ChannelLive {
  reading: Reading | null;
  at: number;
}


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
  secondReading,
  generator,
  generatorAvailable,
  onToggleGenerator,
  levels,
  outputCalibration,
  stimulusNote,
  pending,
  primaryRef,
  onRecord,
}: {
  step: CheckStep;
  planned: PlannedStep;
  /** The unit's channel 1 (the input chosen for the unit). */
  reading: Reading | null;
  readingAt: number;
  /** The unit's channel 2 (the second input), for balance and crosstalk. */
  secondReading: ChannelLive | null;
  generator: GeneratorCommand;
  generatorAvailable: boolean;
  onToggleGenerator(): void;
  /** The calibration in use for this setup: each input's figure, the second's only when it holds. */
  levels: StationLevels | null;
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
  const channels = step.kind === 'balance' || step.kind === 'crosstalk' ? step.channels : [1];
  const unread = channels.filter((c) => !CHANNELS_READ.includes(c));
  const blocked =
    planned.blocked ??
    (unread.length > 0 ? `Step “${step.id}” reads channel ${unread.join(' and ')}; this station reads the unit's channels 1 and 2 only. Measure it on a station with more inputs, or finish the run as FAIL.` : null);
  if (blocked || !needs) {
    return (
      <p className="problem" role="alert" data-testid="step-blocked">
        {blocked}
      </p>
    );
  }

  const now = Date.now();
  const live = channels.map((channel) => {
    const got = channel === 1 ? { reading, at: readingAt } : secondReading;
    const current = got?.reading ?? null;
    return {
      channel,
      reading: current,
      stale: current !== null && now - (got?.at ?? 0) > STALE_READING_MS,
      inputDbuAtFullScale: channel === 1 ? (levels?.inputDbuAtFullScale ?? null) : (levels?.secondInputDbuAtFullScale ?? null),
    };
  });
  const missing = live.find((c) => c.reading === null) ?? null;
  const stale = live.some((c) => c.stale);
  const allSettled = live.every((c) => c.reading?.settled === true);
  // The live preview judges the readings as if they had settled, so the value shows against its
  // limits while they settle; only settled readings are recorded.
  const preview =
    !missing && !stale
      ? measureCheckStep(step, { stimulus: generator, levels, readings: live.map((c) => ({ channel: c.channel, reading: { ...(c.reading as Reading), settled: true }, inputDbuAtFullScale: c.inputDbuAtFullScale })) })
      : null;
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
    if (secondPressTooSoon()) return;
    if (waitingForTone) {
      if (!generatorAvailable) return setMessage('Start capture (Audio interface) first: the generator plays through it.');
      setMessage(null);
      return onToggleGenerator();
    }
    if (!wantsTone && generator.on) return setMessage('The generator is on: this step measures the unit with it off. Press Esc to mute it.');
    if (missing) {
      return setMessage(
        missing.channel === 1 || channels.length === 1
          ? 'There is no reading yet: start capture and wait for it.'
          : levels?.secondInputDbuAtFullScale == null
            ? `There is no reading of the unit's channel ${missing.channel}: choose its input under Audio interface (“channel 2”) and start capture.`
            : `No reading arrives for the unit's channel ${missing.channel}: the interface does not deliver that input on this capture path (it may read one channel only). Check the interface's channel count and the input chosen, then start capture again.`,
      );
    }
    if (stale) return setMessage('No new reading for a while: the capture has stopped delivering. Check the interface, then start capture again.');
    if (!allSettled) return setMessage('Not recorded: the reading has not settled yet. Wait for “settled”, then press Enter.');
    const first = live[0].reading as Reading;
    if (first === recorded.current) return setMessage('This reading is already recorded. Wait for the next reading.');
    if (preview && !preview.ok) return setMessage(preview.refusal);
    setMessage(null);
    try {
      const answered = await onRecord(generator, live.map((c) => ({ channel: c.channel, reading: c.reading as Reading })));
      if (answered !== null) recorded.current = first;
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
      {live.map((c) => (
        <Settle
          key={c.channel}
          reading={waitingForTone ? null : c.reading}
          channel={channels.length > 1 ? { number: c.channel, calibration: c.inputDbuAtFullScale === null ? null : { dbuAtFullScale: c.inputDbuAtFullScale } } : null}
        />
      ))}
      {preview?.ok && !waitingForTone && <MeasurementsTable measurements={preview.result.measurements} live />}
      {preview && !preview.ok && !waitingForTone && allSettled && (
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

/**
 * Progress toward a settled reading, and the time left. A step that reads two channels names each,
 * with its level (through that channel's own input calibration).
 */
function Settle({ reading, channel }: { reading: Reading | null; channel: { number: number; calibration: LevelCalibration | null } | null }) {
  const which = channel === null ? '' : `Channel ${channel.number}${reading ? ` at ${formatLevel(reading.fundamental.levelDbfs, channel.calibration, 2)}` : ''}: `;
  if (!reading) return <p className="hint" data-testid="check-settle">{which}Waiting for a reading…</p>;
  const left =
    reading.settled ? 'Settled: press Enter to record.' : reading.settleRemainingS === null ? 'Waiting for a steady reading…' : `About ${Math.max(1, Math.ceil(reading.settleRemainingS))} s left.`;
  return (
    <div className="settle" data-testid="check-settle" data-settled={reading.settled}>
      <progress max={1} value={reading.settled ? 1 : reading.settleProgress} aria-label="Progress toward a settled reading" />
      <span className="hint">
        {which}
        {reading.settled ? 'settled' : `settling ${Math.round(reading.settleProgress * 100)} %`} · {left}
      </span>
    </div>
  );
}
