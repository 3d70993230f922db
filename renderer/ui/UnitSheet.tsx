import type { RunDetail, StoredProcedure } from '../../shared/ipc/contract.ts';
import { fixed, localDateTime, percent } from './format.ts';
import { TrimPlot } from './TrimPlot.tsx';
import { WARNING_TITLES } from './TrimPanel.tsx';

export function UnitSheet({
  detail,
  procedure,
  pdfPath,
  message,
  onPrint,
  onBack,
}: {
  detail: RunDetail;
  procedure: StoredProcedure['definition'] | undefined;
  pdfPath: string | null;
  message: string | null;
  onPrint(): void;
  onBack(): void;
}) {
  const { run, trimPoints, assessment, warmCheck } = detail;
  const final = trimPoints.at(-1);
  const verdict = run.verdict ?? 'fail';
  const order = assessment?.harmonicOrder ?? procedure?.trim.harmonicOrder ?? 3;
  return (
    <div className="sheet-view">
      <div className="no-print row sheet-actions">
        <button type="button" onClick={onBack}>
          Back to the bench
        </button>
        <button type="button" className="primary" onClick={onPrint}>
          Print…
        </button>
        <span className="hint" data-testid="sheet-pdf-path">
          {pdfPath ? `Saved as ${pdfPath}` : 'Saving the PDF…'}
        </span>
        {message && (
          <span className="problem" role="alert">
            {message}
          </span>
        )}
      </div>
      <article className="sheet" aria-label="Unit sheet">
        <header>
          <h1>Unit sheet</h1>
          <div className={`verdict ${verdict}`} data-testid="sheet-verdict">
            {verdict === 'pass' ? 'PASS' : 'FAIL'}
          </div>
        </header>
        {run.invented && (
          <p className="invented">Demo procedure — the maker, model, limits and values on this sheet are invented for practice.</p>
        )}
        <dl className="facts">
          <dt>Serial</dt>
          <dd data-testid="sheet-serial">{run.serial}</dd>
          <dt>Model</dt>
          <dd>
            {run.modelCode} — {run.modelName}
          </dd>
          <dt>Procedure</dt>
          <dd>
            {run.procedureCode} rev {run.procedureRevision} — {run.procedureTitle}
          </dd>
          <dt>Run</dt>
          <dd>
            {run.id}
            {detail.earlierRuns > 0 ? ` (retest; ${detail.earlierRuns} earlier)` : ''}
          </dd>
          <dt>Date</dt>
          <dd>{localDateTime(run.finishedAt)}</dd>
          <dt>Operator</dt>
          <dd>{run.operator}</dd>
          <dt>Station</dt>
          <dd>{run.station}</dd>
        </dl>
        <h2>Trim points</h2>
        <table className="points">
          <thead>
            <tr>
              <th scope="col">#</th>
              <th scope="col">Position</th>
              <th scope="col">H{order}, dBc</th>
              <th scope="col">THD, dB</th>
              <th scope="col">THD</th>
              <th scope="col">Fundamental, dBFS</th>
              <th scope="col">Settled</th>
              <th scope="col">Recorded</th>
            </tr>
          </thead>
          <tbody>
            {trimPoints.map((p) => (
              <tr key={p.id}>
                <td>{p.sequence}</td>
                <td>{fixed(p.position, 2)}</td>
                <td>{fixed(p.reading.harmonics.find((h) => h.order === order)?.levelDbc, 1)}</td>
                <td>{fixed(p.reading.thdDb, 1)}</td>
                <td>{percent(p.reading.thdPercent)}</td>
                <td>{fixed(p.reading.fundamental.levelDbfs, 2)}</td>
                <td>{p.settled ? 'yes' : 'no'}</td>
                <td>{localDateTime(p.recordedAt)}</td>
              </tr>
            ))}
          </tbody>
        </table>
        <h2>Trim curve</h2>
        {procedure && trimPoints.length > 0 && (
          <TrimPlot
            points={trimPoints}
            assessment={assessment}
            harmonicOrder={order}
            positionMin={procedure.trim.positionMin}
            positionMax={procedure.trim.positionMax}
            height={200}
          />
        )}
        <dl className="facts">
          <dt>Model</dt>
          <dd>{assessment?.reason || '—'}</dd>
          <dt>Null</dt>
          <dd data-testid="sheet-null">
            {assessment?.nullPosition != null
              ? `${fixed(assessment.nullPosition, 2)} ± ${fixed(assessment.nullPositionPlusMinus, 2)} ${procedure?.trim.positionUnit ?? ''}, H${order} ${fixed(assessment.nullLevelDbc, 1)} dBc${assessment.bracketed ? '' : ' (not bracketed)'}`
              : '—'}
          </dd>
          <dt>Recommended</dt>
          <dd>
            {assessment?.recommendedPosition != null
              ? `${fixed(assessment.recommendedPosition, 2)} (predicted H${order} ${fixed(assessment.recommendedLevelDbc, 1)} dBc); final point at ${fixed(final?.position, 2)}, ${assessment.side === 'past-null' ? 'past the null' : 'short of the null'}`
              : '—'}
          </dd>
          <dt>Thermal margin</dt>
          <dd>
            {assessment?.thermalMarginC != null
              ? `the residual stays inside the limit over ±${fixed(assessment.thermalMarginC, 0)} °C if the compensation does not track (copper α = 0.00393/°C)`
              : '—'}
          </dd>
          <dt>Warm re-check</dt>
          <dd data-testid="sheet-warm-check">
            {warmCheck
              ? `${fixed(warmCheck.coldTemperatureC, 1)} → ${fixed(warmCheck.warmTemperatureC, 1)} °C: H${order} ${fixed(warmCheck.coldLevelDbc, 1)} → ${fixed(warmCheck.warmLevelDbc, 1)} dBc; the unit's tracking held ${fixed(100 * warmCheck.trackingFraction, 0)} % of the untracked drift`
              : 'not done'}
          </dd>
        </dl>
        <h2>Warnings raised</h2>
        {detail.warningsRaised.length === 0 ? (
          <p data-testid="sheet-warnings">None.</p>
        ) : (
          <ul data-testid="sheet-warnings">
            {detail.warningsRaised.map((w) => (
              <li key={w.id}>
                <strong>{WARNING_TITLES[w.id]}</strong> (after point {w.afterSequence}): {w.seen}
              </li>
            ))}
          </ul>
        )}
        <h2>Result</h2>
        <dl className="facts">
          <dt>Final reading</dt>
          <dd>
            {final
              ? `THD ${fixed(final.reading.thdDb, 1)} dB (${percent(final.reading.thdPercent)}) at ${fixed(final.reading.fundamental.frequencyHz, 2)} Hz, ${fixed(final.reading.fundamental.levelDbfs, 2)} dBFS, trimmer at ${fixed(final.position, 2)}`
              : '—'}
          </dd>
          <dt>Limit</dt>
          <dd>THD ≤ {fixed(run.limitThdDb, 1)} dB at the final trim point</dd>
          <dt>Verdict</dt>
          <dd>
            {verdict === 'pass' ? 'PASS' : 'FAIL'}
            {run.verdictReason ? ` — ${run.verdictReason}` : ''}
          </dd>
        </dl>
        <footer className="signature">
          <span>Checked by: ______________________</span>
          <span>Made with Trimbench. Trimbench measures; it does not certify electrical safety.</span>
        </footer>
      </article>
    </div>
  );
}
