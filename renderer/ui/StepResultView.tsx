import type { StepResult } from '../../shared/ipc/contract.ts';
import { localTime } from './format.ts';
import { MeasurementsTable } from './MeasurementsTable.tsx';
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
      {result.reasons.length > 0 && (
        <ul className="step-reasons">
          {result.reasons.map((r) => (
            <li key={r}>{r}</li>
          ))}
        </ul>
      )}
      {result.curve && mask && <ResponsePlot key={result.id} curve={result.curve} mask={mask} />}
      {result.measurements.length > 0 && <MeasurementsTable measurements={result.measurements} live={false} />}
    </div>
  );
}
