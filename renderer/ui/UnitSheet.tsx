import type { RunDetail } from '../../shared/ipc/contract.ts';
import { fixed, localDateTime, percent } from './format.ts';

export function UnitSheet({
  detail,
  pdfPath,
  message,
  onPrint,
  onBack,
}: {
  detail: RunDetail;
  pdfPath: string | null;
  message: string | null;
  onPrint(): void;
  onBack(): void;
}) {
  const { run, trimPoints } = detail;
  const final = trimPoints.at(-1);
  const verdict = run.verdict ?? 'fail';
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
                <td>{fixed(p.reading.thdDb, 1)}</td>
                <td>{percent(p.reading.thdPercent)}</td>
                <td>{fixed(p.reading.fundamental.levelDbfs, 2)}</td>
                <td>{p.settled ? 'yes' : 'no'}</td>
                <td>{localDateTime(p.recordedAt)}</td>
              </tr>
            ))}
          </tbody>
        </table>
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
          <dd>{verdict === 'pass' ? 'PASS' : 'FAIL'}</dd>
        </dl>
        <footer className="signature">
          <span>Checked by: ______________________</span>
          <span>Made with Trimbench. Trimbench measures; it does not certify electrical safety.</span>
        </footer>
      </article>
    </div>
  );
}
