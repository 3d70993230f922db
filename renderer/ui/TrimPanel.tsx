import { useEffect, useRef, useState, type RefObject } from 'react';
import type { RunDetail, StepResult, StoredProcedure, WarmCheck } from '../../shared/ipc/contract.ts';
import { formatLevel } from '../../shared/levels.ts';
import type { LevelCalibration } from '../../shared/levels.ts';
import type { Reading } from '../../shared/measurement/reading.ts';
import { whyNotRecordable } from '../../shared/records/stimulus-check.ts';
import { judgeTrimRun } from '../../shared/records/verdict.ts';
import type { LiveSeries, TrimWarning } from '../../shared/trim/trim-assistant.ts';
import { openLiveWarnings, type WarningChange } from '../../shared/trim/warning-tracker.ts';
import { problemText } from '../problem-text.ts';
import { AssistantSummary } from './AssistantSummary.tsx';
import { fixed } from './format.ts';
import { StepResultView } from './StepResultView.tsx';
import { TrimPlot } from './TrimPlot.tsx';
import { TrimPointsTable } from './TrimPointsTable.tsx';
import { TrimWarnings } from './TrimWarnings.tsx';
import type { UnsettledChoice } from './useRun.ts';
import { useLiveSeries } from './useLiveSeries.ts';
import { useLiveWarnings } from './useLiveWarnings.ts';
import { WarmCheckForm } from './WarmCheckForm.tsx';
import type { GeneratorCommand } from '../worker/messages.ts';

// A reading older than this is not recorded: the stream has stopped.
const STALE_READING_MS = 2000;

/**
 * The trim step: record points toward the null with the assistant's advice and live warnings, then
 * "Trim done" hands the trim to main, which judges it from the stored points as the step's result.
 */
export function TrimPanel({
  detail,
  trim,
  reading,
  readingAt,
  onRecord,
  positionInputRef: positionInput,
  generator,
  generatorAvailable,
  onToggleGenerator,
  onWarmCheck,
  onPositionChange,
  onIncludePoint,
  onWarningChanges,
  onTrimDone,
  result,
  inputCalibration = null,
  outputCalibration = null,
}: {
  /** The station's input calibration while it holds: recorded levels in dBu beside dBFS. Null: dBFS only. */
  inputCalibration?: LevelCalibration | null;
  /** The station's output calibration while it holds: the stimulus in dBu beside dBFS. Null: dBFS only. */
  outputCalibration?: LevelCalibration | null;
  detail: RunDetail;
  trim: StoredProcedure['definition']['trim'];
  reading: Reading | null;
  /** When `reading` arrived (ms since the epoch). */
  readingAt: number;
  onRecord(position: number, reading: Reading, live: LiveSeries, unsettled: UnsettledChoice): Promise<void>;
  /** The position field, so whoever moves focus can send it back here (Enter records). */
  positionInputRef: RefObject<HTMLInputElement | null>;
  generator: GeneratorCommand;
  generatorAvailable: boolean;
  onToggleGenerator(): void;
  onWarmCheck(request: { coldTemperatureC: number; warmTemperatureC: number; reading: Reading }): Promise<WarmCheck>;
  /** The typed position changed (the demo bench's virtual trimmer follows it). */
  onPositionChange(position: number): void;
  /** Confirms an unsettled point so it joins the fit. */
  onIncludePoint(pointId: number): Promise<void>;
  onWarningChanges(changes: WarningChange[]): void;
  /** The technician is done trimming: main judges the trim as the step's result. */
  onTrimDone(): Promise<void>;
  /** The trim step's latest recorded result in this run, or null. */
  result: StepResult | null;
}) {
  const { trimPoints, assessment } = detail;
  const last = trimPoints.at(-1);
  const [positionText, setPositionTextState] = useState(String(last ? last.position : trim.positionMin));
  const [message, setMessage] = useState<string | null>(null);
  const [busy, setBusy] = useState(false);
  // The "Record unsettled…" confirmation is open.
  const [confirmingUnsettled, setConfirmingUnsettled] = useState(false);
  // The reading last recorded: a second Enter on the same reading must not make a second point.
  const recordedReading = useRef<Reading | null>(null);
  const series = useLiveSeries(reading);

  const setPositionText = (text: string) => {
    setPositionTextState(text);
    series.moved();
    setConfirmingUnsettled(false);
    const position = Number(text);
    if (text.trim() !== '' && Number.isFinite(position)) onPositionChange(position);
  };

  // The demo bench's virtual trimmer starts where this step starts.
  useEffect(() => onPositionChange(Number(positionText)), []); // eslint-disable-line react-hooks/exhaustive-deps

  // Only what holds now, at the typed position; raised and cleared with hysteresis, and logged.
  const warnings: TrimWarning[] = useLiveWarnings(trim, trimPoints, Number(positionText), reading, generator.frequencyHz, onWarningChanges);

  function stepPosition(direction: 1 | -1) {
    const current = Number(positionText);
    const base = Number.isFinite(current) ? current : trim.positionMin;
    const next = Math.min(trim.positionMax, Math.max(trim.positionMin, base + direction * trim.positionStep));
    setPositionText(String(Math.round(next * 1e6) / 1e6));
  }

  /** Why the current reading cannot be recorded at all (settled or not); null when it can. */
  function notRecordable(position: number): string | null {
    if (positionText.trim() === '' || !Number.isFinite(position)) return 'Type the trimmer position first.';
    if (position < trim.positionMin || position > trim.positionMax) {
      return `Position must be within ${trim.positionMin}–${trim.positionMax} ${trim.positionUnit}.`;
    }
    if (!reading) return 'There is no reading yet: start capture and turn the generator on.';
    if (Date.now() - readingAt > STALE_READING_MS) {
      return 'No new reading for a while: the capture has stopped delivering. Check the interface, then start capture again.';
    }
    if (series.beforeMove(reading)) return 'The reading still includes the previous trimmer position: wait a moment, then record.';
    // The same rule main applies: the generator at the procedure's stimulus and the reading its answer.
    const stimulusProblem = whyNotRecordable(reading, generator, trim, 'record-marked');
    if (stimulusProblem) return stimulusProblem;
    if (reading === recordedReading.current) return 'This reading is already recorded. Move the trimmer, or wait for the next reading.';
    return null;
  }

  /** One call to main at a time, its refusal shown as it came. */
  async function guarded(work: () => Promise<void>, failed: string, retry: string) {
    if (busy) return;
    setBusy(true);
    try {
      await work();
      setMessage(null);
    } catch (error) {
      setMessage(problemText(error, failed, retry));
    } finally {
      setBusy(false);
    }
  }

  async function record(unsettled: UnsettledChoice) {
    const position = Number(positionText);
    if (busy) return;
    const problem = notRecordable(position);
    if (problem !== null || !reading) return setMessage(problem);
    // Enter explains and never records an unsettled reading, however often it is pressed.
    if (!reading.settled && unsettled === 'refuse') {
      return setMessage(
        'Not recorded: the reading has not settled yet. Wait for “settled” and press Enter. To keep this reading as it is, use “Record unsettled…”.',
      );
    }
    setConfirmingUnsettled(false);
    await guarded(
      async () => {
        await onRecord(position, reading, series.recent(), unsettled);
        recordedReading.current = reading;
      },
      'The point was not recorded',
      'Press Record point (Enter) again.',
    );
    positionInput.current?.focus();
  }

  function askRecordUnsettled() {
    const problem = notRecordable(Number(positionText));
    if (problem !== null) return setMessage(problem);
    setMessage(null);
    setConfirmingUnsettled(true);
  }

  const harmonic = `H${trim.harmonicOrder}`;
  // What completing the trim would give now: main's own rule on main's record (its warning log), so
  // the technician knows before pressing it.
  const outlook = trimPoints.length > 0 ? judgeTrimRun({ trimPoints, assessment, openLiveWarnings: openLiveWarnings(detail.warningLog) }, trim) : null;
  return (
    <section className="panel trim" aria-label="Trim step">
      <TrimWarnings warnings={warnings} anyPoints={trimPoints.length > 0} at={`${positionText} ${trim.positionUnit}`} />
      <p className="hint">
        Procedure: {trim.stimulusHz} Hz at {formatLevel(trim.stimulusLevelDbfs, outputCalibration)} · trims {harmonic} · limit THD ≤ {trim.limitThdDb} dB at the
        final point
      </p>
      <div className="row generator-row" data-testid="trim-generator">
        <span className={generator.on ? 'badge live' : 'badge'}>{generator.on ? 'Generator ON' : 'Generator off'}</span>
        <span className="hint">
          {generator.on ? `${fixed(generator.frequencyHz, 3)} Hz at ${formatLevel(generator.levelDbfs, outputCalibration)}` : 'Turn it on to measure.'}
        </span>
        <button type="button" onClick={onToggleGenerator} disabled={!generatorAvailable} data-testid="trim-generator-toggle">
          {generator.on ? 'Turn off (G)' : 'Turn on (G)'}
        </button>
      </div>
      {!generatorAvailable && <p className="hint">Start capture (Audio interface) to use the generator.</p>}
      <div className="row">
        <label>
          Trimmer position, {trim.positionUnit} (↑/↓ step {trim.positionStep})
          <input
            ref={positionInput}
            data-testid="position-input"
            autoFocus
            inputMode="decimal"
            value={positionText}
            onChange={(e) => setPositionText(e.target.value)}
            onKeyDown={(e) => {
              if (e.key === 'Enter') {
                e.preventDefault();
                void record('refuse');
              } else if (e.key === 'ArrowUp' || e.key === 'ArrowDown') {
                e.preventDefault();
                stepPosition(e.key === 'ArrowUp' ? 1 : -1);
              }
            }}
          />
        </label>
        <button type="button" className="primary" onClick={() => void record('refuse')} disabled={busy} data-testid="record-point">
          Record point (Enter)
        </button>
        {reading && !reading.settled && !confirmingUnsettled && whyNotRecordable(reading, generator, trim, 'record-marked') === null && (
          <button type="button" onClick={askRecordUnsettled} disabled={busy} data-testid="record-unsettled">
            Record unsettled…
          </button>
        )}
      </div>
      <p className="hint keys">
        <kbd>Enter</kbd> records a settled reading · <kbd>↑</kbd>/<kbd>↓</kbd> step · <kbd>G</kbd> generator on/off · <kbd>Esc</kbd> mutes
      </p>
      <p className="problem" role="alert" hidden={message === null} data-testid="trim-message">
        {message}
      </p>
      {confirmingUnsettled && (
        <div className="confirm" role="alertdialog" aria-label="Record an unsettled point" data-testid="unsettled-confirm">
          <p>
            Record the reading at {positionText} {trim.positionUnit} although it has not settled? It is marked “unsettled” here and on the
            sheet, and it stays out of the curve fit and the verdict unless you include it later.
          </p>
          <div className="row">
            {/* Cancel holds the focus: a stray Enter here keeps the point out. */}
            <button type="button" autoFocus onClick={() => (setConfirmingUnsettled(false), positionInput.current?.focus())}>
              Cancel
            </button>
            <button type="button" className="warn" onClick={() => void record('record-marked')} data-testid="confirm-unsettled">
              Record marked unsettled
            </button>
          </div>
        </div>
      )}
      <AssistantSummary
        detail={detail}
        harmonic={harmonic}
        unit={trim.positionUnit}
        onUse={(position) => {
          // Plain digits (not the display minus sign), and back to the field so Enter records.
          setPositionText(String(Math.round(position * 100) / 100));
          positionInput.current?.focus();
        }}
      />
      {trimPoints.length > 0 && (
        <TrimPlot
          points={trimPoints}
          assessment={assessment}
          harmonicOrder={trim.harmonicOrder}
          positionMin={trim.positionMin}
          positionMax={trim.positionMax}
          positionUnit={trim.positionUnit}
        />
      )}
      <TrimPointsTable
        points={trimPoints}
        harmonicOrder={trim.harmonicOrder}
        inputCalibration={inputCalibration}
        busy={busy}
        onInclude={(pointId) => void guarded(() => onIncludePoint(pointId), 'The point was not included', 'Press Include in fit again.')}
      />
      {trimPoints.length >= 2 && <WarmCheckForm reading={reading} existing={detail.warmCheck} onWarmCheck={onWarmCheck} />}
      <div className="row">
        <button
          type="button"
          onClick={() => void guarded(onTrimDone, 'The trim was not completed', 'Press Trim done again; the points recorded so far are kept.')}
          disabled={busy || trimPoints.length === 0}
          data-testid="trim-done"
        >
          Trim done: judge the trim
        </button>
      </div>
      {outlook && (
        <p className={outlook.verdict === 'pass' ? 'hint outlook pass' : 'hint outlook'} data-testid="finish-outlook">
          {outlook.verdict === 'pass'
            ? 'The trim passes if you complete it now.'
            : `Not ready to pass: ${outlook.reasons[0]}${outlook.reasons.length > 1 ? ` (and ${outlook.reasons.length - 1} more)` : ''}`}
        </p>
      )}
      {result && <StepResultView result={result} />}
    </section>
  );
}
