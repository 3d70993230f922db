import type { RunDetail } from '../../shared/ipc/contract.ts';
import { describeThermalMargin } from '../../shared/trim/trim-assistant.ts';
import { fixed } from './format.ts';

/** The assistant's latest conclusion: the null, the side, the setting to leave, and where to go next. */
export function AssistantSummary({
  detail,
  harmonic,
  unit,
  onUse,
}: {
  detail: RunDetail;
  harmonic: string;
  unit: string;
  onUse(position: number): void;
}) {
  const a = detail.assessment;
  if (!a) return <p className="hint">Record the first point at the safe end; the assistant fits the trim curve from the second.</p>;
  const thermal = describeThermalMargin(a.thermalMarginC);
  return (
    <div className="assistant" data-testid="assistant">
      {a.fitProblem !== null || a.nullPosition === null ? (
        // An untrustworthy fit shows no numbers: only what is wrong and what to check.
        <p className={a.fitProblem ? 'problem' : 'hint'} data-testid="fit-problem">
          {a.fitProblem ?? a.reason}
        </p>
      ) : (
        <dl className="facts">
          <dt>Null</dt>
          <dd data-testid="null-position">
            {fixed(a.nullPosition, 2)} ± {fixed(a.nullPositionPlusMinus, 2)} {unit} · {harmonic} {fixed(a.nullLevelDbc, 1)} dBc ·{' '}
            {a.bracketed ? 'bracketed' : 'predicted, not yet bracketed'}
          </dd>
          <dt>Last recorded</dt>
          <dd>
            {fixed(detail.trimPoints.at(-1)?.position, 2)} {unit}:{' '}
            {a.side === 'past-null' ? 'past the null (over-compensated)' : 'short of the null (safe side)'}
          </dd>
          <dt>Recommended</dt>
          <dd data-testid="recommended-position">
            {a.recommendedPosition === null
              ? 'not yet: the null is not pinned down well enough to stay safely short of it'
              : `${fixed(a.recommendedPosition, 2)} ${unit} (predicted ${harmonic} ${fixed(a.recommendedLevelDbc, 1)} dBc)`}
          </dd>
          {thermal && (
            <>
              <dt>Temperature</dt>
              <dd>{thermal}</dd>
            </>
          )}
          <dt>Curve fit</dt>
          <dd className="hint">{a.reason}</dd>
        </dl>
      )}
      {a.recommendationNote && <p className="hint">{a.recommendationNote}</p>}
      <div className="row">
        <button type="button" onClick={() => onUse(a.nextPosition)} data-testid="use-next">
          Try next: {fixed(a.nextPosition, 2)}
        </button>
        <button
          type="button"
          onClick={() => a.recommendedPosition !== null && onUse(a.recommendedPosition)}
          disabled={a.recommendedPosition === null}
          data-testid="use-recommended"
        >
          {a.recommendedPosition === null ? 'Set recommended (not yet)' : `Set recommended: ${fixed(a.recommendedPosition, 2)}`}
        </button>
      </div>
    </div>
  );
}
