import { useEffect, useRef, useState } from 'react';
import type { RunDetail, StoredProcedure } from '../../shared/ipc/contract.ts';
import type { Reading } from '../../shared/measurement/reading.ts';
import { fixed, percent } from './format.ts';
import { TrimPlot } from './TrimPlot.tsx';

// A second Enter within this time records an unsettled reading anyway (and it is marked so).
const CONFIRM_UNSETTLED_MS = 4000;

export function TrimPanel({
  detail,
  procedure,
  reading,
  onRecord,
  onPositionChange,
  onFinish,
  onClose,
}: {
  detail: RunDetail;
  procedure: StoredProcedure['definition'];
  reading: Reading | null;
  onRecord(position: number, reading: Reading): Promise<void>;
  /** The typed position changed (the demo bench's virtual trimmer follows it). */
  onPositionChange(position: number): void;
  onFinish(): Promise<void>;
  onClose(): void;
}) {
  const { run, trimPoints } = detail;
  const { trim } = procedure;
  const last = trimPoints.at(-1);
  const [positionText, setPositionTextState] = useState(String(last ? last.position : trim.positionMin));
  const setPositionText = (text: string) => {
    setPositionTextState(text);
    const position = Number(text);
    if (text.trim() !== '' && Number.isFinite(position)) onPositionChange(position);
  };
  const [message, setMessage] = useState<string | null>(null);
  const [busy, setBusy] = useState(false);
  const unsettledAskedAt = useRef(0);
  // The demo bench's virtual trimmer starts where this step starts.
  useEffect(() => onPositionChange(Number(positionText)), []); // eslint-disable-line react-hooks/exhaustive-deps
  // The reading last recorded: a second Enter on the same reading must not make a second point.
  const recordedReading = useRef<Reading | null>(null);

  function stepPosition(direction: 1 | -1) {
    const current = Number(positionText);
    const base = Number.isFinite(current) ? current : trim.positionMin;
    const next = Math.min(trim.positionMax, Math.max(trim.positionMin, base + direction * trim.positionStep));
    setPositionText(String(Math.round(next * 1e6) / 1e6));
  }

  async function record() {
    const position = Number(positionText);
    if (positionText.trim() === '' || !Number.isFinite(position)) return setMessage('Type the trimmer position first.');
    if (position < trim.positionMin || position > trim.positionMax) {
      return setMessage(`Position must be within ${trim.positionMin}–${trim.positionMax} ${trim.positionUnit}.`);
    }
    if (!reading) return setMessage('There is no reading yet: start capture and turn the generator on.');
    if (busy) return;
    if (reading === recordedReading.current) {
      return setMessage('This reading is already recorded. Move the trimmer, or wait for the next reading.');
    }
    if (!reading.settled && Date.now() - unsettledAskedAt.current > CONFIRM_UNSETTLED_MS) {
      unsettledAskedAt.current = Date.now();
      return setMessage('The reading has not settled. Wait for “settled”, or press Enter again to record it marked as unsettled.');
    }
    unsettledAskedAt.current = 0;
    setBusy(true);
    try {
      await onRecord(position, reading);
      recordedReading.current = reading;
      setMessage(null);
    } catch (error) {
      setMessage((error as Error).message);
    } finally {
      setBusy(false);
    }
  }

  async function finish() {
    setBusy(true);
    try {
      await onFinish();
    } catch (error) {
      setMessage((error as Error).message);
    } finally {
      setBusy(false);
    }
  }

  return (
    <section className="panel trim" aria-label="Trim step">
      <h2>
        Trim step · <span data-testid="run-serial">{run.serial}</span>
      </h2>
      <p className="hint">
        {run.modelName} · {run.procedureCode} rev {run.procedureRevision} · run {run.id}
        {detail.earlierRuns > 0 && ` · retest (${detail.earlierRuns} earlier run${detail.earlierRuns === 1 ? '' : 's'})`}
      </p>
      {run.invented && <p className="invented">Demo procedure: invented values, for practice only.</p>}
      <ol className="instructions">
        {trim.instructions.map((text) => (
          <li key={text}>{text}</li>
        ))}
      </ol>
      <p className="hint">
        Stimulus {trim.stimulusHz} Hz at {trim.stimulusLevelDbfs} dBFS · limit THD ≤ {trim.limitThdDb} dB at the final point
      </p>
      <div className="row">
        <label>
          Trimmer position, {trim.positionUnit} (↑/↓ step {trim.positionStep})
          <input
            data-testid="position-input"
            inputMode="decimal"
            value={positionText}
            onChange={(e) => setPositionText(e.target.value)}
            onKeyDown={(e) => {
              if (e.key === 'Enter') {
                e.preventDefault();
                void record();
              } else if (e.key === 'ArrowUp' || e.key === 'ArrowDown') {
                e.preventDefault();
                stepPosition(e.key === 'ArrowUp' ? 1 : -1);
              }
            }}
          />
        </label>
        <button type="button" className="primary" onClick={() => void record()} disabled={busy} data-testid="record-point">
          Record point (Enter)
        </button>
      </div>
      <p className="problem" role="alert" hidden={message === null} data-testid="trim-message">
        {message}
      </p>
      <table className="points" data-testid="trim-points">
        <thead>
          <tr>
            <th scope="col">#</th>
            <th scope="col">Position</th>
            <th scope="col">THD, dB</th>
            <th scope="col">THD</th>
            <th scope="col">Level, dBFS</th>
            <th scope="col">Settled</th>
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
            </tr>
          ))}
        </tbody>
      </table>
      {trimPoints.length > 0 && <TrimPlot points={trimPoints} />}
      <div className="row">
        <button type="button" onClick={() => void finish()} disabled={busy || trimPoints.length === 0} data-testid="finish-run">
          Finish run and make the unit sheet
        </button>
        <button type="button" onClick={onClose} disabled={busy}>
          Close unit
        </button>
      </div>
    </section>
  );
}
