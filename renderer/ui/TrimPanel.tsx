import { useEffect, useRef, useState, type RefObject } from 'react';
import type { RunDetail, StoredProcedure, WarmCheck } from '../../shared/ipc/contract.ts';
import { AT_FLOOR_MARGIN_DB } from '../../shared/calibration/station-calibration.ts';
import { dbuFromDbfs, formatLevel, signedFixed, type LevelCalibration } from '../../shared/levels.ts';
import type { Reading } from '../../shared/measurement/reading.ts';
import { whyNotRecordable } from '../../shared/records/stimulus-check.ts';
import { judgeTrimRun } from '../../shared/records/verdict.ts';
import type { LiveSeries, TrimWarning } from '../../shared/trim/trim-assistant.ts';
import type { WarningChange } from '../../shared/trim/warning-tracker.ts';
import { ApiError } from '../api.ts';
import { problemText } from '../problem-text.ts';
import { AssistantSummary } from './AssistantSummary.tsx';
import { fixed, percent } from './format.ts';
import { TrimPlot } from './TrimPlot.tsx';
import { WARNING_TITLES } from '../../shared/trim/warning-titles.ts';
import { useLiveWarnings } from './useLiveWarnings.ts';
import type { GeneratorCommand } from '../worker/messages.ts';

/**
 * How a reading that has not settled is treated: Enter only ever records settled readings
 * ('refuse'); 'record-marked' comes only from the separate, confirmed "Record unsettled…" action.
 */
export type UnsettledChoice = 'refuse' | 'record-marked';
// Live readings kept since the trimmer last moved (about a minute at six readings a second).
const LIVE_SERIES_LENGTH = 360;
// A reading older than this is not recorded: the stream has stopped.
const STALE_READING_MS = 2000;

export function TrimPanel({
  detail,
  procedure,
  reading,
  readingAt,
  onRecord,
  positionInputRef: positionInput,
  generator,
  generatorAvailable,
  onToggleGenerator,
  onWarmCheck,
  onPositionChange,
  onFinish,
  onIncludePoint,
  onWarningChanges,
  onClose,
  inputCalibration = null,
  outputCalibration = null,
}: {
  /** The station's input calibration while it holds: recorded levels in dBu beside dBFS. Null: dBFS only. */
  inputCalibration?: LevelCalibration | null;
  /** The station's output calibration while it holds: the stimulus in dBu beside dBFS. Null: dBFS only. */
  outputCalibration?: LevelCalibration | null;
  detail: RunDetail;
  procedure: StoredProcedure['definition'];
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
  /** Refused with the reasons when the run has not earned a PASS, unless `asFailure`. */
  onFinish(asFailure: boolean): Promise<void>;
  /** Confirms an unsettled point so it joins the fit. */
  onIncludePoint(pointId: number): Promise<void>;
  onWarningChanges(changes: WarningChange[]): void;
  onClose(): void;
}) {
  const { run, trimPoints, assessment } = detail;
  const { trim } = procedure;
  const last = trimPoints.at(-1);
  const [positionText, setPositionTextState] = useState(String(last ? last.position : trim.positionMin));
  const [message, setMessage] = useState<string | null>(null);
  const [busy, setBusy] = useState(false);
  // The "Record unsettled…" confirmation is open.
  const [confirmingUnsettled, setConfirmingUnsettled] = useState(false);
  // The reading last recorded: a second Enter on the same reading must not make a second point.
  const recordedReading = useRef<Reading | null>(null);
  // Why Finish was refused (the run has not earned a PASS): shown with the offer to finish as FAIL.
  const [finishRefusal, setFinishRefusal] = useState<string | null>(null);
  // Readings since the trimmer last moved: amplitude wander and sub-audio growth show in these.
  const live = useRef<LiveSeries>({ levelsDbfs: [], lfDbfs: [] });
  const lastSequence = useRef(0);
  // The meter restarts its clean stretch at a move; a reading already on its way when the move
  // was sent may still come in, so the first one after the move does not count either.
  const sequenceAtMove = useRef(0);

  const setPositionText = (text: string) => {
    setPositionTextState(text);
    live.current = { levelsDbfs: [], lfDbfs: [] };
    sequenceAtMove.current = lastSequence.current;
    setConfirmingUnsettled(false);
    setFinishRefusal(null);
    const position = Number(text);
    if (text.trim() !== '' && Number.isFinite(position)) onPositionChange(position);
  };

  // The demo bench's virtual trimmer starts where this step starts.
  useEffect(() => onPositionChange(Number(positionText)), []); // eslint-disable-line react-hooks/exhaustive-deps

  useEffect(() => {
    if (!reading) return;
    // A new meter (capture restarted, stimulus changed) starts its sequence again: so does the series.
    if (reading.sequence < lastSequence.current) {
      live.current = { levelsDbfs: [], lfDbfs: [] };
      sequenceAtMove.current = 0;
    }
    // Settle updates repeat the last measured numbers under the same sequence: not a new reading.
    if (reading.sequence === lastSequence.current) return;
    lastSequence.current = reading.sequence;
    if (reading.flags.includes('no-signal')) return;
    const series = live.current;
    series.levelsDbfs.push(reading.fundamental.levelDbfs);
    if (reading.subAudioDbfs !== null) series.lfDbfs.push(reading.subAudioDbfs);
    if (series.levelsDbfs.length > LIVE_SERIES_LENGTH) series.levelsDbfs.shift();
    if (series.lfDbfs.length > LIVE_SERIES_LENGTH) series.lfDbfs.shift();
  }, [reading]);

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
    if (reading.sequence <= sequenceAtMove.current + 1) {
      return 'The reading still includes the previous trimmer position: wait a moment, then record.';
    }
    // The same rule main applies: the generator at the procedure's stimulus and the reading its answer.
    const stimulusProblem = whyNotRecordable(reading, generator, trim, 'record-marked');
    if (stimulusProblem) return stimulusProblem;
    if (reading === recordedReading.current) return 'This reading is already recorded. Move the trimmer, or wait for the next reading.';
    return null;
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
    setBusy(true);
    try {
      await onRecord(position, reading, { levelsDbfs: live.current.levelsDbfs.slice(-60), lfDbfs: live.current.lfDbfs.slice(-60) }, unsettled);
      recordedReading.current = reading;
      setMessage(null);
    } catch (error) {
      setMessage(problemText(error, 'The point was not recorded', 'Press Record point (Enter) again.'));
    } finally {
      setBusy(false);
      positionInput.current?.focus();
    }
  }

  async function includePoint(pointId: number) {
    setBusy(true);
    try {
      await onIncludePoint(pointId);
    } catch (error) {
      setMessage(problemText(error, 'The point was not included', 'Press Include in fit again.'));
    } finally {
      setBusy(false);
    }
  }

  function askRecordUnsettled() {
    const problem = notRecordable(Number(positionText));
    if (problem !== null) return setMessage(problem);
    setMessage(null);
    setConfirmingUnsettled(true);
  }

  async function finish(asFailure: boolean) {
    setBusy(true);
    try {
      await onFinish(asFailure);
    } catch (error) {
      if (error instanceof ApiError && error.kind === 'CannotPass' && !asFailure) setFinishRefusal((error as Error).message);
      else setMessage(problemText(error, 'The run was not finished', 'Press Finish again; the points recorded so far are kept.'));
    } finally {
      setBusy(false);
    }
  }

  const harmonic = `H${trim.harmonicOrder}`;
  // What Finish would give now: main's own rule, so the technician knows before pressing it.
  const outlook = trimPoints.length > 0 ? judgeTrimRun({ trimPoints, assessment, openLiveWarnings: warnings }, trim) : null;
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
      {warnings.length > 0 ? (
        <div className="warning-banner" role="alert" data-testid="trim-warnings">
          {warnings.map((w) => (
            <p key={w.id} data-warning={w.id}>
              <strong>{WARNING_TITLES[w.id]}.</strong> {w.seen} <em>{w.advice}</em>
            </p>
          ))}
        </div>
      ) : (
        // Holds the banner's place, so a warning appearing does not push the panel down.
        trimPoints.length > 0 && (
          <p className="warning-banner quiet" data-testid="no-warnings">
            No warning at {positionText} {trim.positionUnit}.
          </p>
        )
      )}
      <details open={trimPoints.length === 0}>
        <summary>Procedure, safety first</summary>
        <ol className="instructions">
          {trim.instructions.map((text) => (
            <li key={text}>{text}</li>
          ))}
        </ol>
      </details>
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
      <div className="table-scroll">
      <table className="points" data-testid="trim-points">
        <thead>
          <tr>
            <th scope="col">#</th>
            <th scope="col">Position</th>
            <th scope="col">{harmonic}, dBc</th>
            <th scope="col">THD, dB</th>
            <th scope="col">THD, %</th>
            <th scope="col">{inputCalibration ? 'Level, dBu / dBFS' : 'Level, dBFS'}</th>
            <th scope="col">Settled</th>
          </tr>
        </thead>
        <tbody>
          {trimPoints.map((p) => (
            <tr key={p.id}>
              <td>{p.sequence}</td>
              <td>{fixed(p.position, 2)}</td>
              <td>{fixed(p.reading.harmonics.find((h) => h.order === trim.harmonicOrder)?.levelDbc, 1)}</td>
              <td className={p.reading.flags.includes('at-floor') ? 'at-floor' : undefined}>
                {fixed(p.reading.thdDb, 1)}
                {p.reading.flags.includes('at-floor') && ' †'}
              </td>
              <td>{percent(p.reading.thdPercent).replace(' %', '')}</td>
              <td>
                {inputCalibration ? (
                  // Stacked: the narrow column keeps every column in view (Settled included).
                  <>
                    {signedFixed(dbuFromDbfs(p.reading.fundamental.levelDbfs, inputCalibration), 2)}
                    <span className="level-dbfs">{fixed(p.reading.fundamental.levelDbfs, 2)}</span>
                  </>
                ) : (
                  fixed(p.reading.fundamental.levelDbfs, 2)
                )}
              </td>
              <td className={p.inFit ? undefined : 'unsettled'}>
                {p.settled ? 'yes' : p.inFit ? 'no, included' : 'unsettled'}
                {!p.inFit && (
                  <button type="button" className="small" onClick={() => void includePoint(p.id)} disabled={busy} data-testid={`include-${p.sequence}`}>
                    Include in fit
                  </button>
                )}
              </td>
            </tr>
          ))}
        </tbody>
      </table>
      </div>
      {trimPoints.some((p) => p.reading.flags.includes('at-floor')) && (
        <p className="hint" data-testid="trim-at-floor-note">
          † At the station’s floor: THD within {AT_FLOOR_MARGIN_DB} dB of the chain’s own residual; the unit may be better than it reads.
        </p>
      )}
      {trimPoints.some((p) => !p.inFit) && (
        <p className="hint">Unsettled points are marked in red: they stay out of the curve fit and the verdict unless you include them.</p>
      )}
      {trimPoints.length >= 2 && <WarmCheckForm reading={reading} existing={detail.warmCheck} onWarmCheck={onWarmCheck} />}
      <div className="row">
        <button type="button" onClick={() => void finish(false)} disabled={busy || trimPoints.length === 0} data-testid="finish-run">
          Finish run and make the unit sheet
        </button>
        <button type="button" onClick={onClose} disabled={busy} data-testid="close-unit">
          Close unit (mutes the generator)
        </button>
      </div>
      {outlook && (
        <p className={outlook.verdict === 'pass' ? 'hint outlook pass' : 'hint outlook'} data-testid="finish-outlook">
          {outlook.verdict === 'pass'
            ? 'Finishing now gives PASS.'
            : `Not ready to pass: ${outlook.reasons[0]}${outlook.reasons.length > 1 ? ` (and ${outlook.reasons.length - 1} more)` : ''}`}
        </p>
      )}
      {finishRefusal && (
        <div className="confirm" role="alertdialog" aria-label="The run cannot pass yet" data-testid="finish-refusal">
          <p className="refusal">{finishRefusal}</p>
          <div className="row">
            {/* Keep trimming holds the focus: a stray Enter does not fail the unit. */}
            <button type="button" autoFocus onClick={() => (setFinishRefusal(null), positionInput.current?.focus())}>
              Keep trimming
            </button>
            <button type="button" className="warn" onClick={() => void finish(true)} disabled={busy} data-testid="finish-as-fail">
              Finish as FAIL with these reasons
            </button>
          </div>
        </div>
      )}
    </section>
  );
}

function WarmCheckForm({
  reading,
  existing,
  onWarmCheck,
}: {
  reading: Reading | null;
  existing: WarmCheck | null;
  onWarmCheck(request: { coldTemperatureC: number; warmTemperatureC: number; reading: Reading }): Promise<WarmCheck>;
}) {
  const [cold, setCold] = useState('');
  const [warm, setWarm] = useState('');
  const [message, setMessage] = useState<string | null>(null);
  const [result, setResult] = useState<WarmCheck | null>(existing);
  async function submit() {
    const coldC = Number(cold);
    const warmC = Number(warm);
    if (cold.trim() === '' || warm.trim() === '' || !Number.isFinite(coldC) || !Number.isFinite(warmC)) {
      return setMessage('Enter both temperatures in °C.');
    }
    if (!reading?.settled) return setMessage('Wait for a settled reading at the final setting.');
    try {
      setResult(await onWarmCheck({ coldTemperatureC: coldC, warmTemperatureC: warmC, reading }));
      setMessage(null);
    } catch (error) {
      setMessage(problemText(error, 'The warm re-check was not recorded', 'Press Record warm reading again.'));
    }
  }
  return (
    <details className="warm-check">
      <summary>Warm re-check (optional, after the unit has warmed up)</summary>
      <div className="row">
        <label>
          Temperature at trim, °C
          <input inputMode="decimal" value={cold} onChange={(e) => setCold(e.target.value)} />
        </label>
        <label>
          Temperature now, °C
          <input inputMode="decimal" value={warm} onChange={(e) => setWarm(e.target.value)} />
        </label>
        <button type="button" onClick={() => void submit()}>
          Record warm reading
        </button>
      </div>
      {message && (
        <p className="problem" role="alert">
          {message}
        </p>
      )}
      {result && (
        <p className="hint" data-testid="warm-check-result">
          {fixed(result.warmTemperatureC - result.coldTemperatureC, 1)} °C warmer: the unit’s own tracking held{' '}
          {fixed(100 * result.trackingFraction, 0)} % of the drift an untracked winding would show.
        </p>
      )}
    </details>
  );
}
