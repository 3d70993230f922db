// The chain check, run from the Station view: output looped to input, residual distortion at the
// procedures' working points and at 1 kHz, the stepped-sine response, the noise floor with the
// generator off and the round-trip latency; judged against the station's limits, then recorded
// with the calibration.

import { useMemo, useState, useEffect } from 'react';
import { DEFAULT_CHAIN_LIMITS, DEFAULT_CHAIN_LIMITS_NOTE, judgeChainCheck, type ChainCheckJudgement, type ChainCheckResult, type ChainLimits } from '../../shared/calibration/chain-check.ts';
import { TOP_FRACTION_OF_SAMPLE_RATE } from '../../shared/calibration/chain-response.ts';
import { setupChanges, type AudioSetup, type Calibration, type ChainCheckRecord } from '../../shared/calibration/station-calibration.ts';
import type { StationCalibration, StoredProcedure } from '../../shared/ipc/contract.ts';
import type { Reading } from '../../shared/measurement/reading.ts';
import { DEMO_CHAIN_LABEL } from '../../shared/sim/demo-chain.ts';
import { call } from '../api.ts';
import type { BenchAudio } from '../audio/bench-audio.ts';
import { problemText } from '../problem-text.ts';
import type { GeneratorCommand } from '../worker/messages.ts';
import { ChainCheckPlot } from './ChainCheckPlot.tsx';
import { dbText, hzText, responseFrequencies, useChainCheck, workingPoints, type ResponseSpacing } from './useChainCheck.ts';
import './chain-check.css';

export interface ChainCheckPanelProps {
  audio: BenchAudio | null;
  reading: Reading | null;
  readingAt: number;
  applyGenerator(command: GeneratorCommand): void;
  mute(): void;
  setup: AudioSetup | null;
  calibration: Calibration | null;
  chainCheck: ChainCheckRecord | null;
  limits: ChainLimits;
  procedures: StoredProcedure[];
  operator: string;
  onRecorded(next: StationCalibration): void;
}

export function ChainCheckPanel(props: ChainCheckPanelProps) {
  const { audio, calibration, limits, procedures } = props;
  const channel = props.setup?.inputChannel ?? calibration?.setup.inputChannel ?? 0;
  const { run, start, stop, reset } = useChainCheck({
    audio,
    reading: props.reading,
    readingAt: props.readingAt,
    applyGenerator: props.applyGenerator,
    mute: props.mute,
    channel,
    inputDbuAtFullScale: calibration?.input.dbuAtFullScale ?? null,
  });
  const points = useMemo(() => workingPoints(procedures), [procedures]);
  // Starts from the name the station last recorded under; the technician may change it before recording.
  const [operator, setOperator] = useState(props.operator);
  const [skipped, setSkipped] = useState<Set<number>>(new Set());
  const [noise, setNoise] = useState(true);
  const [spacing, setSpacing] = useState<ResponseSpacing | 'none'>('third-octave');
  const [latency, setLatency] = useState(true);
  const [recording, setRecording] = useState(false);
  const [recordMessage, setRecordMessage] = useState<string | null>(null);
  const running = run.state === 'running';

  // Esc stops a running check from anywhere (the page's own Esc handler mutes the generator too).
  useEffect(() => {
    if (!running) return;
    const onKey = (event: KeyboardEvent) => {
      if (event.key === 'Escape') stop('Chain check stopped (Esc): the generator is muted and nothing was stored.');
    };
    window.addEventListener('keydown', onKey);
    return () => window.removeEventListener('keydown', onKey);
  }, [running, stop]);

  if (!calibration) {
    return (
      <section className="panel chain-check" aria-label="Chain check">
        <h2>Chain check</h2>
        <p className="chain-note" data-testid="chain-check-needs-calibration">
          Calibrate the station first: the chain check is stored with the calibration it was measured with, and its noise floor is given in dBu from it.
        </p>
      </section>
    );
  }

  const changed = props.setup ? setupChanges(calibration.setup, props.setup) : [];
  const sampleRateHz = audio?.sampleRateHz ?? props.setup?.sampleRateHz ?? calibration.setup.sampleRateHz;
  const stepCount = spacing === 'none' ? 0 : responseFrequencies(sampleRateHz, spacing).length;
  const chosen = points.filter((_, i) => !skipped.has(i));

  async function record(result: ChainCheckResult) {
    if (!calibration || recording) return;
    if (!operator.trim()) {
      setRecordMessage('Enter the operator name before recording the chain check.');
      return;
    }
    setRecording(true);
    setRecordMessage(null);
    try {
      const next = await call('recordChainCheck', { calibrationId: calibration.id, operator: operator.trim(), result });
      localStorage.setItem('trimbench.operator', operator.trim());
      setRecordMessage(null);
      reset();
      props.onRecorded(next);
    } catch (error) {
      setRecordMessage(problemText(error, 'The chain check could not be recorded', 'Nothing was stored; try Record again.'));
    } finally {
      setRecording(false);
    }
  }

  return (
    <section className="panel chain-check" aria-label="Chain check">
      <h2>Chain check</h2>
      <p className="chain-note">
        Loop the output to input channel {channel + 1} with a cable, and unplug speakers and headphones: the check plays tones up to{' '}
        {dbText(Math.max(...points.map((p) => p.levelDbfs)))} dBFS and a short burst of noise. Follow your site's rules and local codes for the equipment on the bench.
      </p>
      {audio?.isDemo && <p className="chain-note" data-testid="chain-check-demo">{DEMO_CHAIN_LABEL}. Its figures are invented.</p>}
      {changed.length > 0 && (
        <p className="chain-warning">The calibration was made with another {changed.join(', ')}; calibrate again before relying on this check.</p>
      )}
      {!audio && <p className="chain-warning">Capture is not running: press Start capture, then run the chain check.</p>}

      {!running && (
        <fieldset className="chain-plan" disabled={recording}>
          <legend>What to measure</legend>
          <div>
            Residual THD and THD+N at:
            {points.map((p, i) => (
              <label key={`${p.frequencyHz}/${p.levelDbfs}`}>
                <input
                  type="checkbox"
                  checked={!skipped.has(i)}
                  onChange={(e) => setSkipped((s) => {
                    const next = new Set(s);
                    if (e.target.checked) next.delete(i);
                    else next.add(i);
                    return next;
                  })}
                />
                {hzText(p.frequencyHz)}, {dbText(p.levelDbfs)} dBFS <span className="chain-source">({p.source})</span>
              </label>
            ))}
          </div>
          <label>
            Frequency response{' '}
            <select aria-label="Response steps" value={spacing} onChange={(e) => setSpacing(e.target.value as ResponseSpacing | 'none')}>
              <option value="third-octave">third-octave steps</option>
              <option value="octave">octave steps</option>
              <option value="none">not measured</option>
            </select>{' '}
            {stepCount > 0 && <span className="chain-source">{stepCount} steps at −12 dBFS</span>}
          </label>
          <label>
            <input type="checkbox" checked={noise} onChange={(e) => setNoise(e.target.checked)} /> Noise floor with the generator off
          </label>
          <label>
            <input type="checkbox" checked={latency} onChange={(e) => setLatency(e.target.checked)} /> Round-trip latency
          </label>
          <button
            type="button"
            disabled={!audio}
            onClick={() => {
              setRecordMessage(null);
              void start({ residuals: chosen, noise, response: spacing === 'none' ? null : spacing, latency });
            }}
          >
            Run chain check
          </button>
        </fieldset>
      )}

      {run.state === 'running' && (
        <div className="chain-progress" data-testid="chain-check-progress" role="status">
          <div>
            Step {run.progress.index + 1} of {run.progress.total}: {run.progress.step}
          </div>
          <progress max={run.progress.total} value={run.progress.index} />
          <div>About {Math.ceil(run.progress.secondsLeft)} s left</div>
          <button type="button" className="chain-stop" onClick={() => stop()}>
            Stop (Esc)
          </button>
        </div>
      )}
      {(run.state === 'stopped' || run.state === 'failed') && (
        <p className="chain-warning" role="alert" data-testid="chain-check-problem">
          {run.message}
        </p>
      )}

      {run.state === 'finished' && (
        <div data-testid="chain-check-result" data-result={JSON.stringify(run.result)}>
          <h3>Measured now (not yet recorded)</h3>
          <ChainCheckFigures result={run.result} judgement={judgeChainCheck(run.result, limits)} limits={limits} />
          <div className="chain-actions">
            <label>
              Operator
              <input data-testid="chain-check-operator" value={operator} onChange={(e) => setOperator(e.target.value)} maxLength={60} autoComplete="off" />
            </label>
            <button type="button" disabled={recording} onClick={() => void record(run.result)}>
              Record chain check
            </button>
            <button type="button" disabled={recording} onClick={reset}>
              Discard
            </button>
          </div>
          {recordMessage && <p className="chain-warning" role="alert">{recordMessage}</p>}
        </div>
      )}

      {run.state !== 'finished' && props.chainCheck && (
        <div data-testid="chain-check-recorded">
          <h3>
            Recorded {new Date(props.chainCheck.result.measuredAt).toLocaleString()} by {props.chainCheck.operator}
          </h3>
          <ChainCheckFigures result={props.chainCheck.result} judgement={props.chainCheck.judgement} limits={limits} />
        </div>
      )}
      {sameLimits(limits, DEFAULT_CHAIN_LIMITS) && <p className="chain-source">{DEFAULT_CHAIN_LIMITS_NOTE}</p>}
    </section>
  );
}

function ChainCheckFigures({ result, judgement, limits }: { result: ChainCheckResult; judgement: ChainCheckJudgement; limits: ChainLimits }) {
  const topHz = Math.min(limits.flatnessBandHighHz, TOP_FRACTION_OF_SAMPLE_RATE * result.sampleRateHz);
  return (
    <>
      <p className={`verdict ${judgement.pass ? 'pass' : 'fail'}`} data-testid="chain-check-verdict">
        {judgement.pass ? 'PASS' : 'FAIL'}
      </p>
      {result.response && (
        <ChainCheckPlot
          key={`${limits.flatnessDb}/${limits.flatnessBandLowHz}/${topHz}`}
          response={result.response}
          flatnessDb={limits.flatnessDb}
          bandLowHz={limits.flatnessBandLowHz}
          bandHighHz={topHz}
        />
      )}
      <table className="chain-items">
        <thead>
          <tr>
            <th>Item</th>
            <th>Value</th>
            <th>Limit</th>
            <th>Result</th>
            <th>Why</th>
          </tr>
        </thead>
        <tbody>
          {judgement.items.map((item, i) => (
            <tr key={i} className={item.pass ? 'pass' : 'fail'} data-testid="chain-check-item">
              <td>{item.label}</td>
              <td>{figure(item.value, item.unit)}</td>
              <td>{item.limit === null ? '—' : `${item.kind === 'response-flatness' ? '±' : '≤ '}${figure(item.limit, item.unit)}`}</td>
              <td>{item.pass ? 'pass' : 'FAIL'}</td>
              <td>{item.reason}</td>
            </tr>
          ))}
        </tbody>
      </table>
      {result.noiseFloor && (
        <p className="chain-source">
          Noise floor {hzText(result.noiseFloor.bandLowHz)}–{hzText(result.noiseFloor.bandHighHz)}: {figure(result.noiseFloor.unweightedDbfs, 'dBFS')} unweighted
          {result.noiseFloor.unweightedDbu !== null && ` (${figure(result.noiseFloor.unweightedDbu, 'dBu')})`}, {figure(result.noiseFloor.aWeightedDbfs, 'dBFS')} A-weighted
          {result.noiseFloor.aWeightedDbu !== null && ` (${figure(result.noiseFloor.aWeightedDbu, 'dBu')})`}.
        </p>
      )}
    </>
  );
}

function figure(value: number | null, unit: string): string {
  if (value === null) return 'not measured';
  const digits = unit === 'ms' || Math.abs(value) < 10 ? 2 : 1;
  return `${value.toFixed(digits).replace('-', '−')} ${unit}`;
}

function sameLimits(a: ChainLimits, b: ChainLimits): boolean {
  return JSON.stringify(a) === JSON.stringify(b);
}
