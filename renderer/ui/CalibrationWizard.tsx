import { useEffect, useRef, useState } from 'react';
import {
  inputCalibrationFromLoopback,
  inputCalibrationFromSpec,
  outputCalibrationFromReading,
  REFERENCE_DBFS_RANGE,
  type CalibrationResult,
} from '../../shared/calibration/voltmeter-entry.ts';
import type { AudioSetup } from '../../shared/calibration/station-calibration.ts';
import type { StationCalibration } from '../../shared/ipc/contract.ts';
import { signedFixed, vRmsFromDbu } from '../../shared/levels.ts';
import type { Reading } from '../../shared/measurement/reading.ts';
import { DEMO_INTERFACE_DBU_AT_FULL_SCALE } from '../../shared/sim/demo-chain.ts';
import { call } from '../api.ts';
import { DEMO_INPUT } from '../audio/bench-audio.ts';
import { problemText } from '../problem-text.ts';
import { describeSetup } from './StationSettingsForm.tsx';
import type { GeneratorCommand } from '../worker/messages.ts';

/** The reference tone: 1 kHz, where voltmeters are flattest and interfaces are specified (common practice). */
const REFERENCE_HZ = 1000;
const DEFAULT_REFERENCE_DBFS = -20;
/** The loopback reading must be of the reference: its measured frequency within 1 % of it (the same tolerance main applies). */
const LOOPBACK_FREQUENCY_TOLERANCE = 0.01;
/** A reading older than this is not the live loop any more (the stream stopped delivering). */
const STALE_READING_MS = 3000;

type Step = 'cautions' | 'output' | 'input' | 'second-input' | 'save' | 'done';
const STEPS: { step: Step; title: string }[] = [
  { step: 'cautions', title: 'Before you start' },
  { step: 'output', title: 'Output level' },
  { step: 'input', title: 'Input level' },
  { step: 'second-input', title: 'Second input level' },
  { step: 'save', title: 'Record' },
];

interface Captured {
  capturedDbfs: number;
  capturedHz: number;
}

function parseDbfs(text: string): number | null {
  const trimmed = text.trim().replace(/\u2212/g, '-');
  if (!/^[+-]?(?:\d+(?:\.\d*)?|\.\d+)$/.test(trimmed)) return null;
  const value = Number(trimmed);
  return value >= REFERENCE_DBFS_RANGE.min && value <= REFERENCE_DBFS_RANGE.max ? value : null;
}

const dbu = (value: number) => `${signedFixed(value, 2)} dBu`;

function ResultLine({ result, what, testId }: { result: CalibrationResult | null; what: string; testId: string }) {
  if (!result) return null;
  if (!result.ok) {
    return (
      <p className="problem" role="alert" data-testid={testId} data-ok="false">
        {result.message}
      </p>
    );
  }
  return (
    <div data-testid={testId} data-ok="true" data-dbu={result.dbuAtFullScale}>
      <p className="calibration-figure">
        {what}: <strong>{dbu(result.dbuAtFullScale)}</strong> at 0 dBFS
      </p>
      {result.note && <p className="hint">{result.note}</p>}
    </div>
  );
}

/**
 * Level calibration, one step at a time: the output by a true-RMS voltmeter on its terminals, the
 * input by a loopback of that output (or by the interface's stated level), then who did it. Main
 * recomputes every figure from the raw observations sent; the page shows them as they are typed.
 */
export function CalibrationWizard({
  available,
  setup,
  reading,
  readingAt,
  secondReading,
  generatorOn,
  applyGenerator,
  mute,
  onRecorded,
}: {
  /** Capture is running, so the generator can play. */
  available: boolean;
  setup: AudioSetup | null;
  reading: Reading | null;
  readingAt: number;
  /** The second input's reading, when the setup reads a two-channel unit's channel 2 there. */
  secondReading: { reading: Reading; at: number } | null;
  generatorOn: boolean;
  applyGenerator(command: GeneratorCommand): void;
  mute(): void;
  onRecorded(next: StationCalibration): void;
}) {
  const [step, setStep] = useState<Step>('cautions');
  const [referenceText, setReferenceText] = useState(String(DEFAULT_REFERENCE_DBFS));
  const [meterText, setMeterText] = useState('');
  const [method, setMethod] = useState<'loopback' | 'stated'>('loopback');
  const [statedText, setStatedText] = useState('');
  const [captured, setCaptured] = useState<Captured | null>(null);
  const [secondCaptured, setSecondCaptured] = useState<Captured | null>(null);
  const [toneOnAt, setToneOnAt] = useState<number | null>(null);
  const [operator, setOperator] = useState(() => localStorage.getItem('trimbench.operator') ?? '');
  const [message, setMessage] = useState<string | null>(null);
  const [recorded, setRecorded] = useState<StationCalibration | null>(null);
  const saving = useRef(false);
  const [busy, setBusy] = useState(false);
  const stepHeading = useRef<HTMLHeadingElement>(null);

  const referenceDbfs = parseDbfs(referenceText);
  const outputResult = referenceDbfs !== null && meterText.trim() !== '' ? outputCalibrationFromReading(referenceDbfs, meterText) : null;
  const outputDbu = outputResult?.ok ? outputResult.dbuAtFullScale : null;
  const demo = setup?.inputDeviceId === DEMO_INPUT;
  const secondChannel = setup?.secondInputChannel ?? null;
  // The list stays whole while on the second input's step, even if capture stops under it.
  const steps = secondChannel === null && step !== 'second-input' ? STEPS.filter((s) => s.step !== 'second-input') : STEPS;
  // A second input is found by loopback only, and then so is the first (both from the same reference).
  const inputMethod = secondChannel === null ? method : 'loopback';

  // What was captured belongs to the setup it was captured on: a change of device, channel or rate
  // (or capture stopping) discards it, so no figure is ever stored under another input's name.
  const setupKey = setup ? [setup.inputDeviceId, setup.inputChannel, setup.secondInputChannel ?? '', setup.outputDeviceId, setup.sampleRateHz].join('|') : '';
  useEffect(() => {
    setCaptured(null);
    setSecondCaptured(null);
  }, [setupKey]);

  // The tone stops whenever the wizard ends or is left (another view, another station panel).
  const muteRef = useRef(mute);
  muteRef.current = mute;
  useEffect(() => () => muteRef.current(), []);

  // Keyboard: each step starts at its heading, so Tab goes through that step's fields in order.
  useEffect(() => {
    stepHeading.current?.focus();
  }, [step]);

  function playReference() {
    if (referenceDbfs === null || !available) return;
    applyGenerator({ frequencyHz: REFERENCE_HZ, levelDbfs: referenceDbfs, on: true });
    setToneOnAt(Date.now());
  }

  function goTo(next: Step) {
    setMessage(null);
    // Each step turns on the tone it needs itself; none carries a tone over.
    if (generatorOn) mute();
    setToneOnAt(null);
    if (next === 'input') setCaptured(null);
    if (next === 'second-input') setSecondCaptured(null);
    setStep(next);
  }

  // Loopback: the first settled reading of the reference after the tone came on is the captured
  // level, on the input the step reads (the first, or the second input of a two-channel setup).
  const loopbackInput = step === 'second-input' ? (secondReading ? { reading: secondReading.reading, at: secondReading.at } : null) : { reading, at: readingAt };
  const loopbackReading = loopbackInput?.reading ?? null;
  const loopbackReady =
    loopbackReading !== null &&
    toneOnAt !== null &&
    (loopbackInput?.at ?? 0) > toneOnAt &&
    Date.now() - (loopbackInput?.at ?? 0) < STALE_READING_MS &&
    loopbackReading.settled &&
    Math.abs(loopbackReading.measuredFundamentalHz / REFERENCE_HZ - 1) <= LOOPBACK_FREQUENCY_TOLERANCE;
  useEffect(() => {
    if (!generatorOn || !loopbackReady || !loopbackReading) return;
    const taken = { capturedDbfs: loopbackReading.fundamental.levelDbfs, capturedHz: loopbackReading.measuredFundamentalHz };
    if (step === 'input' && inputMethod === 'loopback' && !captured) setCaptured(taken);
    else if (step === 'second-input' && !secondCaptured) setSecondCaptured(taken);
    else return;
    mute();
  }, [step, inputMethod, captured, secondCaptured, generatorOn, loopbackReady, loopbackReading, mute]);

  const inputResult: CalibrationResult | null =
    inputMethod === 'loopback'
      ? captured && outputDbu !== null && referenceDbfs !== null
        ? inputCalibrationFromLoopback({ outputDbuAtFullScale: outputDbu, generatorDbfs: referenceDbfs, capturedDbfs: captured.capturedDbfs })
        : null
      : statedText.trim() !== ''
        ? inputCalibrationFromSpec(statedText)
        : null;
  const secondResult: CalibrationResult | null =
    secondCaptured && outputDbu !== null && referenceDbfs !== null
      ? inputCalibrationFromLoopback({ outputDbuAtFullScale: outputDbu, generatorDbfs: referenceDbfs, capturedDbfs: secondCaptured.capturedDbfs })
      : null;

  async function record() {
    if (saving.current || recorded) return; // an impatient second Enter records nothing more
    if (!setup) return setMessage('Capture has stopped, so the station cannot name the setup being calibrated. Start capture, then press Record again.');
    if (operator.trim() === '') return setMessage('Enter the operator name.');
    if (referenceDbfs === null || !outputResult?.ok || !inputResult?.ok || (secondChannel !== null && !secondResult?.ok)) {
      return setMessage('A step above is not complete; go back and finish it.');
    }
    saving.current = true;
    setBusy(true);
    setMessage(null);
    try {
      const next = await call('recordCalibration', {
        operator: operator.trim(),
        setup,
        output: { referenceHz: REFERENCE_HZ, referenceDbfs, meterEntry: meterText.trim() },
        input: inputMethod === 'loopback' && captured ? { method: 'loopback', generatorDbfs: referenceDbfs, ...captured } : { method: 'stated', statedEntry: statedText.trim() },
        secondInput: secondChannel !== null && secondCaptured ? { channel: secondChannel, generatorDbfs: referenceDbfs, ...secondCaptured } : null,
      });
      localStorage.setItem('trimbench.operator', operator.trim());
      setRecorded(next);
      onRecorded(next);
      setStep('done');
    } catch (error) {
      // Main words its refusals for the technician: shown as they come.
      setMessage(problemText(error, 'The calibration was not recorded', 'Check the steps above, then press Record calibration again.'));
    } finally {
      saving.current = false;
      setBusy(false);
    }
  }

  const stepIndex = steps.findIndex((s) => s.step === step);
  const title = step === 'done' ? 'Calibration recorded' : (steps[stepIndex]?.title ?? '');
  const afterInput: Step = secondChannel === null ? 'save' : 'second-input';

  return (
    <section className="panel calibration-wizard" aria-label="Level calibration" data-testid="calibration-wizard" data-step={step}>
      <h2>Level calibration</h2>
      <ol className="wizard-steps" aria-label="Steps">
        {steps.map((s, i) => (
          <li key={s.step} className={s.step === step ? 'current' : i < stepIndex || step === 'done' ? 'past' : ''} aria-current={s.step === step ? 'step' : undefined}>
            {s.title}
          </li>
        ))}
      </ol>
      <h3 ref={stepHeading} tabIndex={-1} data-testid="wizard-step-title">
        {title}
      </h3>
      {demo && step !== 'done' && (
        <p className="invented">
          Demo bench: the loop is simulated with invented values, for practice. A calibration made here holds only for the demo bench.
        </p>
      )}

      {step === 'cautions' && (
        <>
          <ul className="cautions">
            <li>
              <strong>Disconnect or mute monitor speakers and headphones</strong> before a reference tone plays: a line-level tone can
              damage drivers and hearing. <kbd>Esc</kbd> mutes the generator at once.
            </li>
            <li>
              Mains-powered units with covers off stay disconnected from the interface during calibration; follow your workplace
              electrical-safety rules, local codes and licensed practice.
            </li>
            <li>You need a true-RMS voltmeter on AC volts, and for the loopback a cable from the output to the input channel that carries units.</li>
          </ul>
          {!available && (
            <p className="hint" role="status" data-testid="wizard-needs-capture">
              Start capture first (Audio interface, on the left): the reference tone plays through it.
            </p>
          )}
          <button type="button" className="primary" data-testid="wizard-begin" onClick={() => goTo('output')} disabled={!available}>
            Speakers are muted: begin
          </button>
        </>
      )}

      {step === 'output' && (
        <>
          <ol className="instructions">
            <li>Connect the voltmeter across the interface's output terminals (balanced: between hot and cold).</li>
            <li>Play the {REFERENCE_HZ / 1000} kHz reference and type what the meter shows, with its unit.</li>
          </ol>
          {demo && referenceDbfs !== null && (
            <p className="invented" data-testid="demo-meter">
              Demo bench: an invented meter on the invented interface would read {vRmsFromDbu(referenceDbfs + DEMO_INTERFACE_DBU_AT_FULL_SCALE).toFixed(3)} V at this
              reference.
            </p>
          )}
          <div className="row">
            <label>
              Reference level (dBFS, {REFERENCE_DBFS_RANGE.min} to {REFERENCE_DBFS_RANGE.max})
              <input
                data-testid="reference-dbfs"
                inputMode="decimal"
                value={referenceText}
                onChange={(e) => setReferenceText(e.target.value)}
                disabled={generatorOn}
                aria-invalid={referenceDbfs === null}
              />
            </label>
            {generatorOn ? (
              <button type="button" className="warn" onClick={mute} data-testid="wizard-tone">
                Mute reference (Esc)
              </button>
            ) : (
              <button type="button" onClick={playReference} disabled={referenceDbfs === null || !available} data-testid="wizard-tone">
                Play reference
              </button>
            )}
          </div>
          {referenceDbfs === null && (
            <p className="problem" role="alert">
              Type the reference level as a number from {REFERENCE_DBFS_RANGE.min} to {REFERENCE_DBFS_RANGE.max} dBFS.
            </p>
          )}
          <p className="hint" role="status" data-testid="wizard-tone-status">
            {generatorOn && referenceDbfs !== null ? `Playing ${REFERENCE_HZ} Hz at ${signedFixed(referenceDbfs, 1)} dBFS.` : 'The reference is not playing.'}
          </p>
          <label>
            Voltmeter reading (V, mV, dBu or dBV)
            <input
              data-testid="meter-entry"
              value={meterText}
              placeholder="e.g. 1.228 V"
              autoComplete="off"
              spellCheck={false}
              onChange={(e) => setMeterText(e.target.value)}
              onKeyDown={(e) => {
                if (e.key === 'Enter' && outputResult?.ok) goTo('input');
              }}
            />
          </label>
          <ResultLine result={outputResult} what="Output" testId="output-result" />
          <div className="row">
            <button type="button" onClick={() => goTo('cautions')}>
              Back
            </button>
            <button type="button" className="primary" data-testid="wizard-next" onClick={() => goTo('input')} disabled={!outputResult?.ok}>
              Next: input
            </button>
          </div>
        </>
      )}

      {step === 'input' && (
        <>
          <fieldset className="choice">
            <legend>How to find the input's level</legend>
            <label className="check">
              <input type="radio" name="input-method" checked={inputMethod === 'loopback'} onChange={() => setMethod('loopback')} data-testid="method-loopback" />
              Loopback: the output, just calibrated, looped to the input by a cable
            </label>
            <label className="check">
              <input type="radio" name="input-method" checked={inputMethod === 'stated'} onChange={() => setMethod('stated')} disabled={secondChannel !== null} data-testid="method-stated" />
              Fixed input: the interface's stated level for 0 dBFS
            </label>
            {secondChannel !== null && (
              <p className="hint">A second input is in use: both inputs are found by loopback, from the same reference, so their difference is the interface's own.</p>
            )}
          </fieldset>
          {inputMethod === 'loopback' ? (
            <>
              <LoopbackRead
                connect={`Connect the output to input channel ${setup ? setup.inputChannel + 1 : '—'}, with no unit in between`}
                referenceDbfs={referenceDbfs}
                captured={captured}
                live={{ reading, at: readingAt }}
                toneOnAt={toneOnAt}
                generatorOn={generatorOn}
                available={available}
                onPlay={() => {
                  setCaptured(null);
                  playReference();
                }}
                mute={mute}
              />
            </>
          ) : (
            <label>
              Stated level for 0 dBFS (from the interface's manual: dBu, dBV, V or mV)
              <input data-testid="stated-entry" value={statedText} placeholder="e.g. +18 dBu" autoComplete="off" spellCheck={false} onChange={(e) => setStatedText(e.target.value)} />
            </label>
          )}
          <ResultLine result={inputResult} what="Input" testId="input-result" />
          <div className="row">
            <button type="button" onClick={() => goTo('output')}>
              Back
            </button>
            <button type="button" className="primary" data-testid="wizard-next" onClick={() => goTo(afterInput)} disabled={!inputResult?.ok}>
              {afterInput === 'save' ? 'Next: record' : 'Next: second input'}
            </button>
          </div>
        </>
      )}

      {step === 'second-input' && secondChannel === null && (
        <>
          <p className="problem" role="alert" data-testid="second-input-missing">
            No second input is in use now (capture stopped, or the unit's channel 2 input was set to none). Start capture with that input chosen, or go back.
          </p>
          <button type="button" onClick={() => goTo('input')}>
            Back
          </button>
        </>
      )}
      {step === 'second-input' && secondChannel !== null && (
        <>
          <p className="hint">
            A two-channel unit's channel 2 is read on input channel {secondChannel + 1}, and an interface's inputs can differ by as much as their gain
            settings do: that input gets a figure of its own, from the same loopback.
          </p>
          <LoopbackRead
            connect={`Move the loop cable from the same output to input channel ${secondChannel + 1} (or split it to both inputs with a Y cable), with no unit in between; leave that input's gain where it will stay for units`}
            referenceDbfs={referenceDbfs}
            captured={secondCaptured}
            live={secondReading}
            toneOnAt={toneOnAt}
            generatorOn={generatorOn}
            available={available}
            onPlay={() => {
              setSecondCaptured(null);
              playReference();
            }}
            mute={mute}
          />
          <ResultLine result={secondResult} what={`Input ${secondChannel + 1}`} testId="second-input-result" />
          <div className="row">
            <button type="button" onClick={() => goTo('input')}>
              Back
            </button>
            <button type="button" className="primary" data-testid="wizard-next" onClick={() => goTo('save')} disabled={!secondResult?.ok}>
              Next: record
            </button>
          </div>
        </>
      )}

      {step === 'save' && (
        <form
          onSubmit={(e) => {
            e.preventDefault();
            void record();
          }}
        >
          <dl className="facts wizard-summary">
            <dt>Setup</dt>
            <dd>{setup ? describeSetup(setup) : 'capture is not running'}</dd>
            <dt>Output</dt>
            <dd>{outputDbu !== null ? `${dbu(outputDbu)} at 0 dBFS (meter ${meterText.trim()} at ${signedFixed(referenceDbfs ?? 0, 1)} dBFS)` : '—'}</dd>
            <dt>Input</dt>
            <dd>{inputResult?.ok ? `${dbu(inputResult.dbuAtFullScale)} at 0 dBFS (${inputMethod === 'loopback' ? 'loopback' : `stated ${statedText.trim()}`})` : '—'}</dd>
            {secondChannel !== null && (
              <>
                <dt>Input {secondChannel + 1} (unit channel 2)</dt>
                <dd>{secondResult?.ok ? `${dbu(secondResult.dbuAtFullScale)} at 0 dBFS (loopback)` : '—'}</dd>
              </>
            )}
          </dl>
          <label>
            Operator
            <input data-testid="calibration-operator" value={operator} onChange={(e) => setOperator(e.target.value)} maxLength={60} autoComplete="off" />
          </label>
          <div className="row">
            <button type="button" onClick={() => goTo(secondChannel === null ? 'input' : 'second-input')}>
              Back
            </button>
            <button type="submit" className="primary" data-testid="record-calibration" disabled={busy}>
              {busy ? 'Recording…' : 'Record calibration'}
            </button>
          </div>
        </form>
      )}

      {step === 'done' && recorded?.calibration && (
        <>
          <p data-testid="calibration-done">
            Recorded by {recorded.calibration.operator}: input {dbu(recorded.calibration.input.dbuAtFullScale)}
            {recorded.calibration.secondInput ? `, input ${recorded.calibration.secondInput.channel + 1} ${dbu(recorded.calibration.secondInput.dbuAtFullScale)}` : ''}, output{' '}
            {dbu(recorded.calibration.output.dbuAtFullScale)} at 0 dBFS. Levels are shown in dBu from now on; run the chain check next.
          </p>
          <button
            type="button"
            onClick={() => {
              setRecorded(null);
              setMeterText('');
              setStatedText('');
              setCaptured(null);
              setSecondCaptured(null);
              goTo('cautions');
            }}
          >
            Calibrate again
          </button>
        </>
      )}

      {message && (
        <p className="problem refusal" role="alert" data-testid="wizard-message">
          {message}
        </p>
      )}
    </section>
  );
}

/** Plays the reference and waits for the first settled reading of it on one input; shows what it captured. */
function LoopbackRead({
  connect,
  referenceDbfs,
  captured,
  live,
  toneOnAt,
  generatorOn,
  available,
  onPlay,
  mute,
}: {
  /** What to connect, as a sentence without its full stop. */
  connect: string;
  referenceDbfs: number | null;
  captured: Captured | null;
  live: { reading: Reading | null; at: number } | null;
  toneOnAt: number | null;
  generatorOn: boolean;
  available: boolean;
  onPlay(): void;
  mute(): void;
}) {
  const reading = live?.reading ?? null;
  return (
    <>
      <p className="hint">
        {connect}, then play the reference at {referenceDbfs === null ? '—' : signedFixed(referenceDbfs, 1)} dBFS and wait for a settled reading.
      </p>
      <div className="row">
        {generatorOn ? (
          <button type="button" className="warn" onClick={mute} data-testid="wizard-tone">
            Mute reference (Esc)
          </button>
        ) : (
          <button type="button" onClick={onPlay} disabled={!available} data-testid="wizard-tone">
            {captured ? 'Measure again' : 'Play reference and measure'}
          </button>
        )}
      </div>
      <p className="hint" role="status" data-testid="loopback-status">
        {captured
          ? `Captured ${signedFixed(captured.capturedDbfs, 2)} dBFS at ${captured.capturedHz.toFixed(1)} Hz; the reference is muted.`
          : generatorOn
            ? reading && (live?.at ?? 0) > (toneOnAt ?? Infinity)
              ? `Waiting for a settled reading of ${REFERENCE_HZ} Hz: now ${signedFixed(reading.fundamental.levelDbfs, 2)} dBFS at ${reading.measuredFundamentalHz.toFixed(1)} Hz${reading.settled ? '' : ', not settled'}.`
              : 'Waiting for readings…'
            : 'The reference is not playing.'}
      </p>
      {captured && <p data-testid="captured" data-dbfs={captured.capturedDbfs} data-hz={captured.capturedHz} hidden />}
    </>
  );
}
