import type { UnitJudgement } from '../../shared/procedures/unit-verdict.ts';

const STATUS_TEXT = { pass: 'passed', fail: 'failed', 'not-run': 'not run' } as const;

/** The run's steps in order with each one's status as main judges it; the current one marked. */
export function StepList({ judgement, current, onSelect }: { judgement: UnitJudgement; current: string | null; onSelect(stepId: string): void }) {
  return (
    <ol className="step-list" aria-label="Steps of the run" data-testid="step-list">
      {judgement.steps.map((s) => (
        <li key={s.stepId} className={s.stepId === current ? 'current' : undefined} data-step={s.stepId} data-status={s.status}>
          <button type="button" className="step-link" onClick={() => onSelect(s.stepId)} aria-current={s.stepId === current ? 'step' : undefined}>
            <span className={`status ${s.status}`} aria-hidden="true">
              {s.status === 'pass' ? '✓' : s.status === 'fail' ? '✗' : '·'}
            </span>
            <span className="title">{s.title}</span>
            <span className="status-text">{STATUS_TEXT[s.status]}</span>
          </button>
        </li>
      ))}
    </ol>
  );
}
