import type { RunDetail, StoredProcedure } from '../../shared/ipc/contract.ts';
import { useEffect, useRef } from 'react';
import { fixed, localDateTime, localTime, percent, zoneLabel } from './format.ts';
import { TrimPlot } from './TrimPlot.tsx';
import { WARNING_TITLES } from './TrimPanel.tsx';
import { describeThermalMargin } from '../../shared/trim/trim-assistant.ts';
import { AT_FLOOR_MARGIN_DB, type CalibrationUsed } from '../../shared/calibration/station-calibration.ts';
import { dbuFromDbfs, formatLevel, signedFixed, type LevelCalibration } from '../../shared/levels.ts';

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
  const verdictText = verdict === 'pass' ? 'PASS' : 'FAIL';
  const order = assessment?.harmonicOrder ?? procedure?.trim.harmonicOrder ?? 3;
  const unit = procedure?.trim.positionUnit ?? '';
  const anyUnsettled = trimPoints.some((p) => !p.settled);
  const zone = zoneLabel(new Date(trimPoints[0]?.recordedAt ?? run.finishedAt ?? Date.now()));
  const printButton = useRef<HTMLButtonElement>(null);
  // Levels in dBu with the calibration the run was measured with (stored with the run, not today's).
  const used = detail.calibration;
  const input: LevelCalibration | null = used ? { dbuAtFullScale: used.inputDbuAtFullScale } : null;
  const output: LevelCalibration | null = used ? { dbuAtFullScale: used.outputDbuAtFullScale } : null;
  const atFloor = (p: (typeof trimPoints)[number]) => p.reading.flags.includes('at-floor');
  const anyAtFloor = trimPoints.some(atFloor);

  // The PDF's running header prints the page title on every page, so the title carries the serial.
  useEffect(() => {
    const before = document.title;
    document.title = `${run.serial} · ${verdictText}`;
    return () => {
      document.title = before;
    };
  }, [run.serial, verdictText]);

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
              Serial <strong data-testid="sheet-serial">{run.serial}</strong>
            </div>
          </div>
          <div className={`verdict ${verdict}`} data-testid="sheet-verdict">
            {verdictText}
          </div>
        </header>
        {run.invented && (
          <p className="invented">Demo procedure — the maker, product, limits and values on this sheet are invented for practice.</p>
        )}
        <dl className="facts result">
          <dt>Verdict</dt>
          <dd data-testid="sheet-verdict-line">
            {verdictText}
            {run.verdictReasons.length === 1 && ` — ${run.verdictReasons[0]}`}
            {run.verdictReasons.length > 1 && (
              <ul className="reasons">
                {run.verdictReasons.map((reason) => (
                  <li key={reason}>{reason}</li>
                ))}
              </ul>
            )}
          </dd>
          <dt>Stimulus</dt>
          <dd data-testid="sheet-stimulus">
            {final?.stimulusHz != null ? `${fixed(final.stimulusHz, 3)} Hz` : '—'}
            {procedure && ` at ${formatLevel(procedure.trim.stimulusLevelDbfs, output)} (procedure: ${procedure.trim.stimulusHz} Hz)`}
          </dd>
          <dt>Limit</dt>
          <dd>THD ≤ {fixed(run.limitThdDb, 1)} dB at the final trim point</dd>
          <dt>Final reading</dt>
          <dd>
            {final
              ? `THD ${fixed(final.reading.thdDb, 1)} dB (${percent(final.reading.thdPercent)}) at ${fixed(final.reading.fundamental.frequencyHz, 2)} Hz, ${formatLevel(final.reading.fundamental.levelDbfs, input, 2)}, trimmer at ${fixed(final.position, 2)} ${unit}${final.settled ? '' : ' (unsettled)'}${atFloor(final) ? ' (at the station’s floor †)' : ''}`
              : '—'}
          </dd>
        </dl>
        <dl className="facts two-up">
          <dt>Product</dt>
          <dd>
            {run.modelCode} — {run.modelName}
          </dd>
          <dt>Procedure</dt>
          <dd>
            {run.procedureCode} rev {run.procedureRevision}
          </dd>
          <dt>Finished</dt>
          <dd>{localDateTime(run.finishedAt)}</dd>
          <dt>Run</dt>
          <dd>
            {run.id}
            {detail.earlierRuns > 0 ? ` (retest; ${detail.earlierRuns} earlier)` : ''}
          </dd>
          <dt>Operator</dt>
          <dd>{run.operator}</dd>
          <dt>Station</dt>
          <dd>{run.station}</dd>
          <CalibrationFacts used={used} />
        </dl>
        <h2>Trim points</h2>
        <table className="points">
          <thead>
            <tr>
              <th scope="col">#</th>
              <th scope="col">Position, {unit}</th>
              <th scope="col">H{order}, dBc</th>
              <th scope="col">THD, dB</th>
              <th scope="col">THD, %</th>
              <th scope="col">{input ? 'Fundamental, dBu (dBFS)' : 'Fundamental, dBFS'}</th>
              <th scope="col">Settled</th>
              <th scope="col">Recorded ({zone})</th>
            </tr>
          </thead>
          <tbody>
            {trimPoints.map((p) => (
              <tr key={p.id}>
                <td>{p.sequence}</td>
                <td>{fixed(p.position, 2)}</td>
                <td>{fixed(p.reading.harmonics.find((h) => h.order === order)?.levelDbc, 1)}</td>
                <td>
                  {fixed(p.reading.thdDb, 1)}
                  {atFloor(p) && ' †'}
                </td>
                <td>{percent(p.reading.thdPercent).replace(' %', '')}</td>
                <td>
                  {input
                    ? `${signedFixed(dbuFromDbfs(p.reading.fundamental.levelDbfs, input), 2)} (${fixed(p.reading.fundamental.levelDbfs, 2)})`
                    : fixed(p.reading.fundamental.levelDbfs, 2)}
                </td>
                <td className={p.inFit ? undefined : 'unsettled'}>{p.settled ? 'yes' : p.inFit ? 'no, confirmed *' : 'no *'}</td>
                <td>{localTime(p.recordedAt)}</td>
              </tr>
            ))}
          </tbody>
        </table>
        {anyAtFloor && (
          <p className="note" data-testid="sheet-at-floor-note">
            † At the station’s floor: THD within {AT_FLOOR_MARGIN_DB} dB of the chain’s residual
            {used?.chainFloor?.residualThdDb != null ? ` (${fixed(used.chainFloor.residualThdDb, 1)} dB)` : ''}; the unit may be better than it reads.
          </p>
        )}
        {anyUnsettled && (
          <p className="note" data-testid="sheet-unsettled-note">
            * Unsettled: recorded deliberately before the reading had settled, so its value may still have been changing. An unsettled
            point is left out of the curve fit and the verdict unless the technician confirmed it.
          </p>
        )}
        <div className="sheet-curve">
          <div>
            <h2>Trim curve</h2>
            {procedure && trimPoints.length > 0 && (
              <TrimPlot
                points={trimPoints}
                assessment={assessment}
                harmonicOrder={order}
                positionMin={procedure.trim.positionMin}
                positionMax={procedure.trim.positionMax}
                positionUnit={unit}
                // 172 px (was 190) leaves room for the calibration rows: a ten-point run still fits one A4 page.
                height={172}
              />
            )}
          </div>
          <dl className="facts">
            <dt>Curve fit</dt>
            <dd>{assessment?.fitProblem ?? (assessment?.reason || '—')}</dd>
            <dt>Null</dt>
            <dd data-testid="sheet-null">
              {assessment?.nullPosition != null
                ? `${fixed(assessment.nullPosition, 2)} ± ${fixed(assessment.nullPositionPlusMinus, 2)} ${unit}, H${order} ${fixed(assessment.nullLevelDbc, 1)} dBc${assessment.bracketed ? '' : ' (not bracketed)'}`
                : '—'}
            </dd>
            <dt>Recommended</dt>
            <dd>
              {assessment?.recommendedPosition != null
                ? `${fixed(assessment.recommendedPosition, 2)} ${unit} (predicted H${order} ${fixed(assessment.recommendedLevelDbc, 1)} dBc); final point at ${fixed(final?.position, 2)}, ${assessment.side === 'past-null' ? 'past the null' : 'short of the null'}`
                : '—'}
            </dd>
            <dt>Thermal margin</dt>
            <dd>
              {describeThermalMargin(assessment?.thermalMarginC ?? null) ?? '—'}
            </dd>
            <dt>Warm re-check</dt>
            <dd data-testid="sheet-warm-check">
              {warmCheck
                ? `${fixed(warmCheck.coldTemperatureC, 1)} → ${fixed(warmCheck.warmTemperatureC, 1)} °C: H${order} ${fixed(warmCheck.coldLevelDbc, 1)} → ${fixed(warmCheck.warmLevelDbc, 1)} dBc; the unit's tracking held ${fixed(100 * warmCheck.trackingFraction, 0)} % of the untracked drift`
                : 'not done'}
            </dd>
          </dl>
        </div>
        <h2>Warnings raised</h2>
        {detail.warningLog.length === 0 ? (
          <p data-testid="sheet-warnings">None.</p>
        ) : (
          <>
            <table className="points warning-log" data-testid="sheet-warnings">
              <thead>
                <tr>
                  <th scope="col">Time ({zone})</th>
                  <th scope="col">Warning</th>
                  <th scope="col">Change</th>
                  <th scope="col">At, {unit}</th>
                  <th scope="col">After point</th>
                  <th scope="col">Seen</th>
                </tr>
              </thead>
              <tbody>
                {detail.warningLog.map((w, i) => (
                  <tr key={i}>
                    <td>{localTime(w.at)}</td>
                    <td>{WARNING_TITLES[w.id]}</td>
                    <td>{w.change}</td>
                    <td>{fixed(w.position, 2)}</td>
                    <td>{w.afterSequence}</td>
                    <td className="seen">{w.seen}</td>
                  </tr>
                ))}
              </tbody>
            </table>
            <p className="note">
              A warning still active at the final point fails the unit; one that was raised and cleared earlier is listed here for the
              record.
            </p>
          </>
        )}
        <footer className="signature">
          <span>Checked by: ______________________</span>
          <span>Made with Trimbench. Trimbench measures; it does not certify electrical safety.</span>
        </footer>
      </article>
    </div>
  );
}

/**
 * The calibration the run was measured with and the chain's floor, or plainly that there was none:
 * rows of the facts grid, one line each, so a ten-point run still fits one A4 page.
 */
function CalibrationFacts({ used }: { used: CalibrationUsed | null }) {
  if (!used) {
    return (
      <>
        <dt className="wide">Calibration</dt>
        <dd className="wide" data-testid="sheet-calibration">
          Station not calibrated: levels in dBFS only.
        </dd>
      </>
    );
  }
  const floor = used.chainFloor;
  return (
    <>
      <dt className="wide">Calibration</dt>
      <dd className="wide" data-testid="sheet-calibration">
        No. {used.id} by {used.operator} on {localDateTime(used.madeAt).slice(0, 10)}, expires {localDateTime(used.expiresAt).slice(0, 10)} · 0 dBFS ={' '}
        {signedFixed(used.inputDbuAtFullScale, 1)} dBu in, {signedFixed(used.outputDbuAtFullScale, 1)} dBu out
      </dd>
      <dt className="wide">Chain floor</dt>
      <dd className="wide" data-testid="sheet-chain-floor">
        {floor
          ? [
              floor.residualThdDb !== null && floor.residualAtHz !== null
                ? `residual THD ${fixed(floor.residualThdDb, 1)} dB at ${fixed(floor.residualAtHz, 0)} Hz`
                : 'no residual THD measured',
              floor.noiseAWeightedDbu !== null ? `noise ${signedFixed(floor.noiseAWeightedDbu, 1)} dBu A-weighted` : 'noise not measured in dBu',
              `chain check ${localDateTime(floor.checkedAt).slice(0, 10)}: ${floor.pass ? 'PASS' : 'FAIL'}`,
            ].join(' · ')
          : 'not checked: no chain check with this calibration'}
      </dd>
    </>
  );
}
