import { ProceduresPanel } from './ProceduresPanel.tsx';
import { useEffect, useState, type ReactNode } from 'react';
import type { AudioSetup, CalibrationStatus } from '../../shared/calibration/station-calibration.ts';
import type { StationSettings } from '../../shared/calibration/station-settings.ts';
import type { IpcResponse, StationCalibration, StoredProcedure } from '../../shared/ipc/contract.ts';
import { signedFixed } from '../../shared/levels.ts';
import type { Reading } from '../../shared/measurement/reading.ts';
import { call } from '../api.ts';
import type { BenchAudio } from '../audio/bench-audio.ts';
import { problemText } from '../problem-text.ts';
import type { GeneratorCommand } from '../worker/messages.ts';
import { CalibrationWizard } from './CalibrationWizard.tsx';
import { ChainCheckPanel } from './ChainCheckPanel.tsx';
import { StationSettingsForm } from './StationSettingsForm.tsx';

type History = IpcResponse<'listCalibrations'>;

function CalibrationHistory({ history, problem }: { history: History | null; problem: string | null }) {
  return (
    <section className="panel" aria-label="Calibration history">
      <h2>Calibration history</h2>
      {problem && (
        <p className="problem" role="alert">
          {problem}
        </p>
      )}
      {history && history.length === 0 && <p className="hint">No calibration has been recorded on this station.</p>}
      {history && history.length > 0 && (
        <div className="table-scroll">
          <table className="history" data-testid="calibration-history">
            <thead>
              <tr>
                <th>Made</th>
                <th>By</th>
                <th>Input → output</th>
                <th>Rate</th>
                <th className="number">In, dBu at 0 dBFS</th>
                <th className="number">Out, dBu at 0 dBFS</th>
                <th>Chain check</th>
              </tr>
            </thead>
            <tbody>
              {history.map(({ calibration, chainChecks }) => {
                const latest = chainChecks.at(-1) ?? null;
                return (
                  <tr key={calibration.id}>
                    <td>{new Date(calibration.madeAt).toLocaleString()}</td>
                    <td>{calibration.operator}</td>
                    <td className="devices" title={`${calibration.setup.inputDeviceLabel} → ${calibration.setup.outputDeviceLabel}`}>
                      {calibration.setup.inputDeviceLabel} (ch {calibration.setup.inputChannel + 1}) → {calibration.setup.outputDeviceLabel}
                    </td>
                    <td>{calibration.setup.sampleRateHz / 1000} kHz</td>
                    <td className="number">
                      {signedFixed(calibration.input.dbuAtFullScale, 2)}
                      {calibration.input.method === 'stated' ? ' (stated)' : ''}
                    </td>
                    <td className="number">{signedFixed(calibration.output.dbuAtFullScale, 2)}</td>
                    <td className={latest ? (latest.judgement.pass ? 'pass' : 'fail') : ''}>
                      {latest ? (latest.judgement.pass ? 'PASS' : 'FAIL') : 'not run'}
                      {chainChecks.length > 1 ? ` (${chainChecks.length} runs)` : ''}
                    </td>
                  </tr>
                );
              })}
            </tbody>
          </table>
        </div>
      )}
    </section>
  );
}

/**
 * The station's own view: its settings, its level calibration and chain check, and their history.
 * The audio panel is the bench's own (passed in), so capture started here is the bench's capture.
 */
export function StationView({
  stationCalibration,
  status,
  audioPanel,
  audio,
  reading,
  readingAt,
  secondReading,
  generatorOn,
  applyGenerator,
  mute,
  setup,
  choiceSetup,
  procedures,
  onSaveSettings,
  onRecorded,
  onBack,
  onProceduresChanged,
}: {
  stationCalibration: StationCalibration | null;
  status: CalibrationStatus | null;
  audioPanel: ReactNode;
  audio: BenchAudio | null;
  reading: Reading | null;
  readingAt: number;
  /** The second input's reading, for calibrating it. */
  secondReading: { reading: Reading; at: number } | null;
  generatorOn: boolean;
  applyGenerator(command: GeneratorCommand): void;
  mute(): void;
  /** The setup capture runs with now; null without capture. */
  setup: AudioSetup | null;
  /** The setup as chosen (for the station's default audio), capture or not. */
  choiceSetup: AudioSetup | null;
  procedures: StoredProcedure[];
  onSaveSettings(next: StationSettings): Promise<void>;
  onRecorded(next: StationCalibration): void;
  onBack(): void;
  /** A procedure was imported: the app reads the list again. */
  onProceduresChanged(): void;
}) {
  const [history, setHistory] = useState<History | null>(null);
  const [historyProblem, setHistoryProblem] = useState<string | null>(null);
  const latestId = stationCalibration?.calibration?.id ?? null;
  const latestCheckId = stationCalibration?.chainCheck?.id ?? null;

  useEffect(() => {
    let cancelled = false;
    call('listCalibrations', {})
      .then((list) => !cancelled && (setHistory(list), setHistoryProblem(null)))
      .catch((error: unknown) => !cancelled && setHistoryProblem(problemText(error, 'The calibration history could not be read', 'Open the Station view again.')));
    return () => {
      cancelled = true;
    };
  }, [latestId, latestCheckId]);

  const operator = localStorage.getItem('trimbench.operator') ?? '';

  return (
    <div className="station-view" data-testid="station-view">
      <div className="row station-head">
        <h2 tabIndex={-1} id="station-heading">
          Station {stationCalibration?.settings.stationName ?? ''}
        </h2>
        {status && (
          <span className={`hint status-${status.state}`} data-testid="calibration-status">
            {status.message}
          </span>
        )}
        <button type="button" onClick={onBack} data-testid="station-back">
          Back to the bench
        </button>
      </div>
      <div className="station-columns">
        <div className="column">
          {audioPanel}
          {stationCalibration && (
            <StationSettingsForm
              settings={stationCalibration.settings}
              currentSetup={choiceSetup}
              onSave={onSaveSettings}
            />
          )}
        </div>
        <div className="column">
          <CalibrationWizard
            available={audio !== null}
            setup={setup}
            reading={reading}
            readingAt={readingAt}
            secondReading={secondReading}
            generatorOn={generatorOn}
            applyGenerator={applyGenerator}
            mute={mute}
            onRecorded={onRecorded}
          />
          {stationCalibration && (
            <ChainCheckPanel
              audio={audio}
              reading={reading}
              readingAt={readingAt}
              applyGenerator={applyGenerator}
              mute={mute}
              setup={setup}
              calibration={stationCalibration.calibration}
              chainCheck={stationCalibration.chainCheck}
              limits={stationCalibration.settings.chainLimits}
              procedures={procedures}
              operator={operator}
              onRecorded={onRecorded}
            />
          )}
        </div>
      </div>
      <CalibrationHistory history={history} problem={historyProblem} />
      <ProceduresPanel onImported={onProceduresChanged} />
    </div>
  );
}
