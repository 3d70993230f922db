import { useEffect, useState, type ReactNode, type RefObject } from 'react';
import type { RunDetail } from '../../shared/ipc/contract.ts';
import { ApiError } from '../api.ts';
import { problemText } from '../problem-text.ts';
import { mayRepeat } from '../../shared/procedures/unit-verdict.ts';
import { StepList } from './StepList.tsx';
import { StepResultView } from './StepResultView.tsx';
import { TrimPointsTable } from './TrimPointsTable.tsx';
import type { useWalk } from './useWalk.ts';

/**
 * The run's steps in order: the list with each step's status, the current step (its instructions
 * and `children`, the panel that measures it), a step's stored result with Repeat, and Finish once
 * main's judgement says the run is finished. Enter with nothing focused presses the current step's
 * main action.
 */
export function StepWalk({
  detail,
  walk,
  pending,
  primaryRef,
  onFinish,
  onClose,
  children,
}: {
  detail: RunDetail;
  walk: ReturnType<typeof useWalk>;
  pending: boolean;
  primaryRef: RefObject<HTMLButtonElement | null>;
  /** Resolves null when another call was in flight. */
  onFinish(asFailure: boolean): Promise<unknown>;
  onClose(): void;
  /** The panel that measures the current step (mode "measure"). */
  children: ReactNode;
}) {
  const { run, judgement, procedureFile } = detail;
  const [finishProblem, setFinishProblem] = useState<{ text: string; canFail: boolean } | null>(null);
  const step = procedureFile.steps.find((s) => s.id === walk.current) ?? null;
  const result = step ? (detail.stepResults.filter((r) => r.stepId === step.id).at(-1) ?? null) : null;
  const stopped = judgement.stoppedAt !== null;
  // Nothing measured yet (at most a notice read): there is nothing to finish, only a unit to close.
  const measuredAnything = detail.trimPoints.length > 0 || detail.stepResults.some((r) => r.kind !== 'notice');

  useEffect(() => {
    const onKey = (event: KeyboardEvent) => {
      if (event.key !== 'Enter' || event.defaultPrevented) return;
      const target = event.target as HTMLElement | null;
      if (target && target !== document.body) return;
      event.preventDefault();
      primaryRef.current?.click();
    };
    window.addEventListener('keydown', onKey);
    return () => window.removeEventListener('keydown', onKey);
  }, [primaryRef]);

  async function finish(asFailure: boolean) {
    setFinishProblem(null);
    try {
      await onFinish(asFailure);
    } catch (error) {
      if (error instanceof ApiError && error.kind === 'CannotPass' && !asFailure) setFinishProblem({ text: error.message, canFail: true });
      else setFinishProblem({ text: problemText(error, 'The run was not finished', 'Press Finish again; the results recorded so far are kept.'), canFail: false });
    }
  }

  return (
    <section className="panel walk" aria-label="Run">
      <h2>
        Unit <span data-testid="run-serial">{run.serial}</span>
      </h2>
      <p className="hint">
        {run.modelName} · {run.procedureCode} rev {run.procedureRevision} · run {run.id}
        {run.lot ? ` · lot ${run.lot}` : ''}
        {detail.earlierRuns > 0 && ` · retest (${detail.earlierRuns} earlier run${detail.earlierRuns === 1 ? '' : 's'})`}
      </p>
      {run.invented && <p className="invented">Demo procedure: invented values, for practice only.</p>}
      <StepList judgement={judgement} current={walk.current} onSelect={walk.select} />

      {step && (
        <div className="current-step" data-testid="current-step" data-step={step.id} data-kind={step.kind} data-mode={walk.mode}>
          <h3>{step.title}</h3>
          <ol className="instructions">
            {step.instructions.map((text) => (
              <li key={text}>{text}</li>
            ))}
          </ol>
          {step.kind !== 'notice' && step.onFail === 'stop' && <p className="hint">A failure here stops the run as FAIL.</p>}
          {walk.mode === 'measure' ? (
            children
          ) : (
            <>
              {result ? <StepResultView result={result} mask={step.kind === 'response' ? step.mask : undefined} /> : <p className="hint">Not run yet.</p>}
              {/* The trim's points stay readable here, even when nothing more can be recorded. */}
              {step.kind === 'trim' && detail.trimPoints.length > 0 && (
                <TrimPointsTable points={detail.trimPoints} harmonicOrder={detail.procedure.trim.harmonicOrder} inputCalibration={null} busy onInclude={() => undefined} />
              )}
              <div className="row">
                {/* Just recorded: Enter goes on (a repeat would play the step again). */}
                {walk.justRecorded === step.id && !stopped && (
                  <button type="button" className="primary" ref={primaryRef} autoFocus onClick={walk.back} data-testid="go-on">
                    {judgement.nextStepId ? 'Go on to the next step (Enter)' : 'Go on (Enter)'}
                  </button>
                )}
                {result && mayRepeat(procedureFile, detail.stepResults, step.id) && (
                  <button
                    type="button"
                    ref={walk.justRecorded === step.id && !stopped ? undefined : primaryRef}
                    autoFocus={!(walk.justRecorded === step.id && !stopped)}
                    onClick={() => walk.repeat(step.id)}
                    disabled={pending}
                    data-testid="repeat-step"
                  >
                    {walk.justRecorded === step.id && !stopped ? 'Repeat step' : 'Repeat step (Enter)'}
                  </button>
                )}
                {!stopped && walk.justRecorded !== step.id && (
                  <button type="button" onClick={walk.back} data-testid="back-to-current">
                    Back to the current step
                  </button>
                )}
              </div>
            </>
          )}
        </div>
      )}

      {judgement.finished && walk.mode !== 'measure' ? (
        <div className={`finish ${judgement.verdict}`} data-testid="walk-finish">
          <p>
            {stopped ? 'The run stopped at a failed step that stops it: ' : 'Every step is judged: '}
            <strong data-testid="walk-verdict">{judgement.verdict === 'pass' ? 'PASS' : 'FAIL'}</strong>
          </p>
          {judgement.reasons.length > 0 && (
            <ul className="step-reasons" data-testid="walk-reasons">
              {judgement.reasons.map((r) => (
                <li key={r}>{r}</li>
              ))}
            </ul>
          )}
          <button
            type="button"
            className={judgement.verdict === 'pass' ? 'primary' : 'warn'}
            // After a stop, finishing as FAIL is all that is left: Enter does it.
            ref={walk.mode === 'finish' || stopped ? primaryRef : undefined}
            autoFocus={walk.mode === 'finish' || stopped}
            disabled={pending}
            onClick={() => void finish(judgement.verdict === 'fail')}
            data-testid="finish-run"
          >
            {judgement.verdict === 'pass' ? 'Finish run and make the unit sheet' : 'Finish as FAIL and make the unit sheet'}
          </button>
        </div>
      ) : (
        // Before every step is judged, Finish ends the run only as a FAIL: main says what is missing first.
        <div className="row">
          <button type="button" disabled={pending || !measuredAnything} onClick={() => void finish(false)} data-testid="finish-run">
            Finish run now…
          </button>
        </div>
      )}
      {finishProblem && !finishProblem.canFail && (
        <p className="problem" role="alert" data-testid="finish-message">
          {finishProblem.text}
        </p>
      )}
      {finishProblem?.canFail && (
        <div className="confirm" role="alertdialog" aria-label="The run cannot pass yet" data-testid="finish-refusal">
          <p className="refusal">{finishProblem.text}</p>
          <div className="row">
            {/* Go back holds the focus: a stray Enter does not fail the unit. */}
            <button type="button" autoFocus onClick={() => setFinishProblem(null)}>
              Go back to the steps
            </button>
            <button type="button" className="warn" onClick={() => void finish(true)} disabled={pending} data-testid="finish-as-fail">
              Finish as FAIL with these reasons
            </button>
          </div>
        </div>
      )}
      <div className="row">
        <button type="button" onClick={onClose} disabled={pending} data-testid="close-unit">
          Close unit (mutes the generator)
        </button>
      </div>
    </section>
  );
}
