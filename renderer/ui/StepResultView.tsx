import type { StepResult } from '../../shared/ipc/contract.ts';
import { localTime } from './format.ts';
import { MeasurementsTable } from './MeasurementsTable.tsx';
import { RingingPlot } from './RingingPlot.tsx';
import { ResponsePlot } from './ResponsePlot.tsx';
import type { ResponseStep } from '../../shared/procedures/response.ts';

/** A step's result as main stored and judged it. */
export function StepResultView({ result, mask }: { result: StepResult; mask?: ResponseStep['mask'] }) {
  return (
    <div className={`step-result ${result.verdict}`} data-testid="step-result" data-step={result.stepId} data-verdict={result.verdict}>
      <p>
        <strong>{result.verdict === 'pass' ? 'Passed' : 'Failed'}</strong>
        {result.attempt > 1 ? ` (attempt ${result.attempt})` : ''} · recorded {localTime(result.recordedAt)}
      </p>
      <StepReasons reasons={result.reasons} />
      {result.curve && mask && <ResponsePlot key={result.id} curve={result.curve} mask={mask} />}
      {result.measurements.length > 0 && <MeasurementsTable measurements={result.measurements} live={false} />}
      {result.scopeRecord && <RingingPlot key={result.id} plot={result.scopeRecord.plot} fileName={result.scopeRecord.fileName} />}
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
