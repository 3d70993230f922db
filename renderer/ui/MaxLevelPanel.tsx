import { useEffect, useMemo, useRef, useState, type RefObject } from 'react';
import { signedFixed } from '../../shared/levels.ts';
import type { Reading } from '../../shared/measurement/reading.ts';
import type { CheckResult, StationLevels } from '../../shared/procedures/check-steps.ts';
import { judgeMaxLevel, maxLevelPlan, outputDbuOf, type MaxLevelPoint, type MaxLevelStep } from '../../shared/procedures/max-level.ts';
import type { PlannedStep } from '../../shared/procedures/run-plan.ts';
import { problemText } from '../problem-text.ts';
import type { GeneratorCommand } from '../worker/messages.ts';
import { compactNumber } from '../../shared/format.ts';
import { percent } from './format.ts';
import { MaxLevelPlot } from './MaxLevelPlot.tsx';
import { MeasurementsTable } from './MeasurementsTable.tsx';
import { DOUBLE_PRESS_MS, secondPressTooSoon } from './primary-press.ts';
import { StepReasons } from './StepResultView.tsx';
import { secondsLeft, useMaxLevelSequence, type SequenceState } from './useMaxLevelSequence.ts';


/**
 * A max-level step: the caution, Enter to start, the levels rising with each one's THD+N, progress
 * and time left and the plot against the threshold; at the end the level found against its limit
 * (the shared rules' judgement, as main will make it) and Enter to record it. Esc stops at once and
 * records nothing.
 */
export function MaxLevelPanel({
  step,
  planned,
  reading,
  generator,
  generatorAvailable,
  apply,
  mute,
  levels,
  stimulusNote,
  pending,
  primaryRef,
  onRecord,
}: {
  step: MaxLevelStep;
  planned: PlannedStep;
  reading: Reading | null;
  generator: GeneratorCommand;
  generatorAvailable: boolean;
  apply(command: GeneratorCommand): void;
  mute(): void;
  levels: StationLevels | null;
  stimulusNote: string | null;
  pending: boolean;
  primaryRef: RefObject<HTMLButtonElement | null>;
  onRecord(points: MaxLevelPoint[]): Promise<unknown>;
}) {
  const planned_ = useMemo(() => maxLevelPlan(step, levels), [step, levels]);
  const plan = planned_.ok ? planned_.plan : null;
  const { state, start, reset } = useMaxLevelSequence({ step, plan, levels, reading, generator, apply, mute });
  const [message, setMessage] = useState<string | null>(null);
  // The Enter that opened this step (a notice acknowledged, the step before recorded) must not start
  // a loud sequence: a press this soon after the panel appeared is taken as that one.
  const shownAt = useRef(performance.now());
  const outcome = useMemo(() => (state.phase === 'ended' ? judgeMaxLevel(step, levels, state.points) : null), [state.phase, state.points, step, levels]);
  const blocked = planned.blocked ?? (planned_.ok ? null : planned_.refusal);
  if (blocked || !plan || !levels) {
    return (
      <p className="problem" role="alert" data-testid="step-blocked">
        {blocked}
      </p>
    );
  }

  async function primary() {
    if (pending || secondPressTooSoon() || performance.now() - shownAt.current < DOUBLE_PRESS_MS) return;
    if (state.phase === 'running') return;
    if (state.phase === 'ended' && outcome?.ok) {
      setMessage(null);
      try {
        await onRecord(state.points);
      } catch (error) {
        setMessage(problemText(error, 'The step was not recorded', 'Press Enter to record it again, or Esc and run the step again.'));
      }
      return;
    }
    if (!generatorAvailable) return setMessage('Start capture (Audio interface) first: the generator plays through it.');
    setMessage(null);
    reset();
    start();
  }

  const points = state.points.map((p) => ({ outputDbu: outputDbuOf(p.reading, levels), thdnPercent: p.reading.thdnPercent }));
  const label =
    state.phase === 'running'
      ? 'Running… (Esc stops)'
      : state.phase === 'ended' && outcome?.ok
        ? 'Record the step (Enter)'
        : state.phase === 'ready'
          ? 'Start the rising level (Enter)'
          : 'Start again from the first level (Enter)';

  return (
    <div className="check-step max-level" data-testid="max-level" data-phase={state.phase}>
      <MaxLevelCaution step={step} plan={plan} />
      {stimulusNote && <p className="hint">{stimulusNote}</p>}
      <div className="row generator-row">
        <span className={generator.on ? 'badge live' : 'badge'}>{generator.on ? 'Generator ON' : 'Generator off'}</span>
        {state.phase === 'running' && (
          <button type="button" className="warn" onClick={mute} data-testid="max-level-stop">
            Stop now (Esc)
          </button>
        )}
      </div>
      {state.phase === 'running' && <Progress state={state} levelCount={plan.levelsDbu.length} levelDbu={plan.levelsDbu[state.index] as number} reading={reading} />}
      <MaxLevelPlot points={points} thresholdPercent={step.thdnThresholdPercent} rangeDbu={[plan.levelsDbu[0] as number, plan.levelsDbu.at(-1) as number]} />
      <LevelsTable state={state} levelsDbu={plan.levelsDbu} outputs={points} thresholdPercent={step.thdnThresholdPercent} />
      {state.phase === 'stopped' && (
        <p className="problem" role="alert" data-testid="max-level-stopped">
          {state.stoppedWhy}
        </p>
      )}
      {outcome?.ok && <Outcome result={outcome.result} end={state.end?.next === 'stop' ? state.end.why : 'crossed'} />}
      {outcome && !outcome.ok && (
        <p className="problem" role="alert" data-testid="max-level-refusal">
          Nothing can be recorded from this sequence: {outcome.refusal}
        </p>
      )}
      <div className="row">
        <button type="button" className="primary" ref={primaryRef} autoFocus onClick={() => void primary()} disabled={pending || state.phase === 'running'} data-testid="check-primary" data-step-primary>
          {label}
        </button>
      </div>
      <p className="problem" role="alert" hidden={message === null} data-testid="check-message">
        {message}
      </p>
    </div>
  );
}

/** How the sequence ended, judged by the shared rules as main will judge it, before it is recorded. */
function Outcome({ result, end }: { result: CheckResult; end: 'crossed' | 'ceiling' | 'clipped' }) {
  const m = result.measurements[0];
  const headline = m?.value === null ? 'Not measured: the step fails' : result.verdict === 'pass' ? 'Within its limit' : 'Outside its limit';
  return (
    <div data-testid="max-level-outcome" data-verdict={result.verdict} data-end={end}>
      <p>
        <strong>{headline}</strong> (not recorded yet: press Enter to record it)
      </p>
      <div className="table-scroll">
        <MeasurementsTable measurements={result.measurements} live={false} />
      </div>
      {/* A value's note says how it was found (a bound, the readings either side); without a value the reason says it all. */}
      {m && m.value !== null && m.note && (
        <p className="hint" data-testid="max-level-note">
          {m.note.endsWith('.') ? m.note : `${m.note}.`}
        </p>
      )}
      <StepReasons reasons={result.reasons} />
    </div>
  );
}

/** What the step will do, and the cautions for a loud test, before it starts. */
function MaxLevelCaution({ step, plan }: { step: MaxLevelStep; plan: { levelsDbu: number[] } }) {
  return (
    <div className="caution" data-testid="max-level-caution">
      <p>
        <strong>Loud test.</strong> The generator plays {step.frequencyHz} Hz from {signedFixed(plan.levelsDbu[0] as number, 1)} dBu, rising {compactNumber(step.stepDb)} dB at a time up to at most{' '}
        {signedFixed(plan.levelsDbu.at(-1) as number, 1)} dBu ({plan.levelsDbu.length} levels), until the unit's THD+N reaches {compactNumber(step.thdnThresholdPercent)} %.
      </p>
      <ul className="cautions">
        <li>Mute or disconnect monitor speakers and headphones; wear hearing protection near the unit.</li>
        <li>The unit may be loud at its output and may run hot: keep its output loaded as the procedure says.</li>
        <li>Where your workplace's rules ask more, follow them.</li>
        <li>
          <kbd>Esc</kbd> stops at once and mutes the generator; nothing is recorded then. The run stops by itself if the station's input clips.
        </li>
      </ul>
    </div>
  );
}

/** The level playing, progress through the levels, and the time left if none crosses first. */
function Progress({ state, levelCount, levelDbu, reading }: { state: SequenceState; levelCount: number; levelDbu: number; reading: Reading | null }) {
  const [now, setNow] = useState(() => performance.now());
  useEffect(() => {
    const timer = setInterval(() => setNow(performance.now()), 500);
    return () => clearInterval(timer);
  }, []);
  const left = secondsLeft(state, levelCount, now);
  const settling = reading && !reading.settled ? ` · settling ${Math.round(reading.settleProgress * 100)} %` : '';
  return (
    <div className="settle" data-testid="max-level-progress">
      <progress max={levelCount} value={state.index} aria-label="Levels done" />
      <span className="hint">
        Level {state.index + 1} of {levelCount}: generator at {signedFixed(levelDbu, 1)} dBu{settling}
        {left === null ? '' : ` · about ${Math.max(1, Math.round(left))} s left if THD+N stays under the threshold`}
      </span>
    </div>
  );
}

/** Each level played: the generator's level, the unit's output and its THD+N against the threshold. */
function LevelsTable({ state, levelsDbu, outputs, thresholdPercent }: { state: SequenceState; levelsDbu: number[]; outputs: { outputDbu: number; thdnPercent: number }[]; thresholdPercent: number }) {
  if (outputs.length === 0 && state.phase !== 'running') return null;
  return (
    <div className="table-scroll">
      <table className="measurements" data-testid="max-level-levels">
        <thead>
          <tr>
            <th scope="col">Level</th>
            <th scope="col">Generator</th>
            <th scope="col">Unit output</th>
            <th scope="col">THD+N</th>
          </tr>
        </thead>
        <tbody>
          {outputs.map((o, i) => (
            <tr key={i} data-thdn={o.thdnPercent} data-output={o.outputDbu}>
              <td>{i + 1}</td>
              <td>{signedFixed(levelsDbu[i] as number, 1)} dBu</td>
              <td>{signedFixed(o.outputDbu, 2)} dBu</td>
              <td className={o.thdnPercent >= thresholdPercent ? 'verdict-cell fail' : ''}>{percent(o.thdnPercent)}</td>
            </tr>
          ))}
          {state.phase === 'running' && (
            <tr className="hint">
              <td>{state.index + 1}</td>
              <td>{signedFixed(levelsDbu[state.index] as number, 1)} dBu</td>
              <td colSpan={2}>reading…</td>
            </tr>
          )}
        </tbody>
      </table>
    </div>
  );
}
