import type { StepResult } from '../../shared/ipc/contract.ts';
import { localTime } from './format.ts';
import { MeasurementsTable } from './MeasurementsTable.tsx';

/** A step's result as main stored and judged it. */
export function StepResultView({ result }: { result: StepResult }) {
  return (
    <div className={`step-result ${result.verdict}`} data-testid="step-result" data-step={result.stepId} data-verdict={result.verdict}>
      <p>
        <strong>{result.verdict === 'pass' ? 'Passed' : 'Failed'}</strong>
        {result.attempt > 1 ? ` (attempt ${result.attempt})` : ''} · recorded {localTime(result.recordedAt)}
      </p>
      <StepReasons reasons={result.reasons} />
      {result.measurements.length > 0 && <MeasurementsTable measurements={result.measurements} live={false} />}
    </div>
  );
}

/** Why a step failed, one sentence each; nothing on a pass. */
export function StepReasons({ reasons }: { reasons: readonly string[] }) {
  if (reasons.length === 0) return null;
  return (
    <ul className="step-reasons">
      {reasons.map((r) => (
        <li key={r}>{r}</li>
      ))}
    </ul>
  );
}
