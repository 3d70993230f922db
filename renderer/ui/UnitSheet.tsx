import type { RunDetail } from '../../shared/ipc/contract.ts';
import { Fragment, useEffect, useMemo, useRef } from 'react';
import { asSentences } from '../../shared/format.ts';
import { buildSheetModel, type SheetCalibration, type SheetModel, type SheetStep } from '../../shared/sheet/sheet-model.ts';
import { localDateTime, localTime, zoneLabel } from './format.ts';
import { TrimPlot } from './TrimPlot.tsx';

/**
 * The unit sheet: renders the sheet model (shared/sheet/sheet-model.ts), which decides what it says.
 * The run detail itself is used only for the trim curve's plot.
 */
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
  const sheet = useMemo(() => buildSheetModel(detail), [detail]);
  const { verdict, trim } = sheet;
  const verdictClass = verdict.verdict ?? 'fail';
  const zone = zoneLabel(new Date(detail.trimPoints[0]?.recordedAt ?? sheet.finishedAt ?? sheet.startedAt));
  const printButton = useRef<HTMLButtonElement>(null);

  // The PDF's running header prints the page title on every page, so the title carries the serial.
  useEffect(() => {
    const before = document.title;
    document.title = sheet.documentTitle;
    return () => {
      document.title = before;
    };
  }, [sheet.documentTitle]);

  // After Finish the keyboard lands on the sheet's main action.
  useEffect(() => printButton.current?.focus(), []);

  return (
    <div className="sheet-view">
      <div className="no-print row sheet-actions">
        <button type="button" ref={printButton} className="primary" onClick={onPrint} data-testid="sheet-print">
          Print…
        </button>
        {/* Not while the PDF is being made: it is rendered from this view. */}
        <button type="button" onClick={onBack} data-testid="sheet-back" disabled={!pdfPath && !message}>
          Back to the bench (next unit)
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
          <div>
            <h1>Unit sheet</h1>
            <div className="sheet-serial">
              Serial <strong data-testid="sheet-serial">{sheet.unit.serial}</strong>
            </div>
          </div>
          <div className={`verdict ${verdictClass}`} data-testid="sheet-verdict">
            {verdict.text}
          </div>
        </header>
        {sheet.procedure.inventedLabel && <p className="invented">{sheet.procedure.inventedLabel}</p>}
        <dl className="facts result">
          <dt>Verdict</dt>
          <dd data-testid="sheet-verdict-line">
            {verdict.text}
            {verdict.reasons.length === 1 && ` — ${verdict.reasons[0]}`}
            {verdict.reasons.length > 1 && (
              <ul className="reasons">
                {verdict.reasons.map((reason) => (
                  <li key={reason}>{reason}</li>
                ))}
              </ul>
            )}
            {verdict.discrepancy && (
              <p className="problem" data-testid="sheet-discrepancy">
                {verdict.discrepancy}
              </p>
            )}
          </dd>
        </dl>
        <RunFacts sheet={sheet} />
        <h2>Steps</h2>
        <StepTable steps={sheet.steps} notes={sheet.notes} />
        {sheet.stepsNote && <p className="note">{sheet.stepsNote}</p>}
        {trim && (
          <>
            <h2>Trim</h2>
            <table className="points">
              <thead>
                <tr>
                  <th scope="col">#</th>
                  <th scope="col">Position, {trim.positionUnit}</th>
                  <th scope="col">H{trim.harmonicOrder}, dBc</th>
                  <th scope="col">THD, dB</th>
                  <th scope="col">THD, %</th>
                  <th scope="col">{trim.fundamentalHeading}</th>
                  <th scope="col">Settled</th>
                  <th scope="col">Recorded ({zone})</th>
                </tr>
              </thead>
              <tbody>
                {trim.points.map((p) => (
                  <tr key={p.sequence}>
                    <td>{p.sequence}</td>
                    <td>{p.position}</td>
                    <td>{p.harmonicDbc}</td>
                    <td>
                      {p.thdDb}
                      {p.atFloor && ' †'}
                    </td>
                    <td>{p.thdPercent}</td>
                    <td>{p.fundamental}</td>
                    <td className={p.outOfFit ? 'unsettled' : undefined}>{p.settled}</td>
                    <td>{localTime(p.recordedAt)}</td>
                  </tr>
                ))}
              </tbody>
            </table>
            {trim.atFloorNote && (
              <p className="note" data-testid="sheet-at-floor-note">
                {trim.atFloorNote}
              </p>
            )}
            {trim.unsettledNote && (
              <p className="note" data-testid="sheet-unsettled-note">
                {trim.unsettledNote}
              </p>
            )}
            <div className="sheet-trim">
              <dl className="facts trim-facts">
                <dt>Stimulus</dt>
                <dd data-testid="sheet-stimulus">{trim.stimulus}</dd>
                {trim.limit && (
                  <>
                    <dt>Limit</dt>
                    <dd>{trim.limit}</dd>
                  </>
                )}
                <dt>Final reading</dt>
                <dd>{trim.finalReading}</dd>
                <dt>Curve fit</dt>
                <dd>{trim.curveFit}</dd>
                <dt>Null</dt>
                <dd data-testid="sheet-null">{trim.nullText}</dd>
                <dt>Recommended</dt>
                <dd>{trim.recommended}</dd>
                <dt>Thermal margin</dt>
                <dd>{trim.thermalMargin}</dd>
                <dt>Warm re-check</dt>
                <dd data-testid="sheet-warm-check">
                  {trim.warmCheck}
                </dd>
                {trim.warnings.length === 0 && (
                  <>
                    <dt>Warnings raised</dt>
                    <dd data-testid="sheet-warnings">
                      None.
                    </dd>
                  </>
                )}
              </dl>
              <div className="sheet-curve">
                <h3>Trim curve</h3>
                {detail.trimPoints.length > 0 && (
                  <TrimPlot
                    points={detail.trimPoints}
                    assessment={detail.assessment}
                    harmonicOrder={trim.harmonicOrder}
                    positionMin={trim.positionMin}
                    positionMax={trim.positionMax}
                    positionUnit={trim.positionUnit}
                    // Beside the trim's facts: the demo procedure's steps and a ten-point trim share one A4 page.
                    height={130}
                  />
                )}
              </div>
            </div>
            {trim.warnings.length > 0 && (
              <>
                <h2>Warnings raised</h2>
                <table className="points warning-log" data-testid="sheet-warnings">
                  <thead>
                    <tr>
                      <th scope="col">Time ({zone})</th>
                      <th scope="col">Warning</th>
                      <th scope="col">Change</th>
                      <th scope="col">At, {trim.positionUnit}</th>
                      <th scope="col">After point</th>
                      <th scope="col">Seen</th>
                    </tr>
                  </thead>
                  <tbody>
                    {trim.warnings.map((w, i) => (
                      <tr key={i}>
                        <td>{localTime(w.at)}</td>
                        <td>{w.title}</td>
                        <td>{w.change}</td>
                        <td>{w.position}</td>
                        <td>{w.afterSequence}</td>
                        <td className="seen">{w.seen}</td>
                      </tr>
                    ))}
                  </tbody>
                </table>
                <p className="note">{trim.warningsNote}</p>
              </>
            )}
          </>
        )}
        <footer className="signature">
          <span>Checked by: ______________________</span>
          <span>{sheet.footer}</span>
        </footer>
      </article>
    </div>
  );
}

/** Who, what, where and when: two facts a line, the calibration rows across. */
function RunFacts({ sheet }: { sheet: SheetModel }) {
  const { unit, procedure } = sheet;
  return (
    <dl className="facts two-up">
      <dt>Product</dt>
      <dd>
        {unit.modelCode} — {unit.modelName}
      </dd>
      <dt>Maker</dt>
      <dd>{unit.maker}</dd>
      <dt>Procedure</dt>
      <dd data-testid="sheet-procedure">
        {procedure.code} rev {procedure.revision}
      </dd>
      <dt>Run</dt>
      <dd data-testid="sheet-run">
        {sheet.runId}
      </dd>
      <dt>Operator</dt>
      <dd>{sheet.operator}</dd>
      <dt>Station</dt>
      <dd>{sheet.station}</dd>
      <dt>Started</dt>
      <dd>{localDateTime(sheet.startedAt)}</dd>
      <dt>Finished</dt>
      <dd>{localDateTime(sheet.finishedAt)}</dd>
      <dt>Lot</dt>
      <dd data-testid="sheet-lot">{unit.lot ?? '—'}</dd>
      <dt>Retest</dt>
      <dd data-testid="sheet-retest">{sheet.retest.text}</dd>
      <CalibrationFacts calibration={sheet.calibration} />
    </dl>
  );
}

/** The calibration the run was measured with and the chain's floor, or plainly that there was none. */
function CalibrationFacts({ calibration: c }: { calibration: SheetCalibration }) {
  return (
    <>
      <dt className="wide">Calibration</dt>
      <dd className="wide" data-testid="sheet-calibration">
        {c.used ? `No. ${c.id} by ${c.operator} on ${localDateTime(c.madeAt).slice(0, 10)}, expires ${localDateTime(c.expiresAt).slice(0, 10)} · ${c.levels}` : c.text}
      </dd>
      {c.used && (
        <>
          <dt className="wide">Chain floor</dt>
          <dd className="wide" data-testid="sheet-chain-floor">
            {c.chainFloor ? `${c.chainFloor.text} · chain check ${localDateTime(c.chainFloor.checkedAt).slice(0, 10)}: ${c.chainFloor.passText}` : c.noChainFloorText}
          </dd>
        </>
      )}
    </>
  );
}

/**
 * Every step in procedure order, one row per measurement, failing rows marked. A measurement's note
 * is a numbered footnote under the table, so each row stays one line.
 */
function StepTable({ steps, notes }: { steps: SheetStep[]; notes: string[] }) {
  return (
    <>
      <table className="points steps" data-testid="sheet-steps">
        <colgroup>
          <col className="number" />
          <col className="step" />
          <col className="quantity" />
          <col className="value" />
          <col className="limit" />
          <col className="result" />
        </colgroup>
        <thead>
          <tr>
            <th scope="col">#</th>
            <th scope="col">Step</th>
            <th scope="col">Quantity</th>
            <th scope="col">Value</th>
            <th scope="col">Limit</th>
            <th scope="col">Result</th>
          </tr>
        </thead>
        <tbody>
          {steps.map((step) => {
            const rows = Math.max(1, step.measurements.length);
            const head = (
              <>
                <td rowSpan={rows}>{step.number}</td>
                <th scope="row" rowSpan={rows} className="step-name">
                  {step.title}
                  <span className="conditions">
                    {' — '}
                    {step.conditions}
                    {step.attempts > 1 && ` · recorded ${step.attempts} times, the latest counts`}
                  </span>
                  {step.reasons.length > 0 && <span className="conditions failing">{asSentences(step.reasons)}</span>}
                </th>
              </>
            );
            const result = (
              <td rowSpan={rows} className={step.failing ? 'result failing' : 'result'}>
                {step.statusText}
              </td>
            );
            if (step.measurements.length === 0) {
              return (
                <tr key={step.id} className={step.failing ? 'failing' : undefined} data-step={step.id}>
                  {head}
                  <td colSpan={3} />
                  {result}
                </tr>
              );
            }
            return (
              <Fragment key={step.id}>
                {step.measurements.map((m, i) => (
                  <tr key={m.quantity} className={m.failing ? 'failing' : undefined} data-step={step.id}>
                    {i === 0 && head}
                    <td className="quantity">
                      {m.label}
                      {m.noteNumber !== null && <sup>{m.noteNumber}</sup>}
                    </td>
                    <td>{m.valueText}</td>
                    <td>{m.limitText}</td>
                    {i === 0 && result}
                  </tr>
                ))}
              </Fragment>
            );
          })}
        </tbody>
      </table>
      {notes.length > 0 && (
        <ol className="note step-notes">
          {notes.map((note) => (
            <li key={note}>{note}</li>
          ))}
        </ol>
      )}
    </>
  );
}
