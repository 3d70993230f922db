import { useCallback, useEffect, useMemo, useRef, useState } from 'react';
import type { RunDetail, Station, StationCalibration, StoredProcedure } from '../../shared/ipc/contract.ts';
import { calibrationStatus, residualNear, type AudioSetup as StationAudioSetup } from '../../shared/calibration/station-calibration.ts';
import type { LevelCalibration } from '../../shared/levels.ts';
import type { StationSettings } from '../../shared/calibration/station-settings.ts';
import type { Reading } from '../../shared/measurement/reading.ts';
import type { LiveSeries } from '../../shared/trim/trim-assistant.ts';
import { NoCoherentFrequency, planTestFrequency } from '../../shared/measurement/frequency-planner.ts';
import { checkStimulus } from '../../shared/records/stimulus-check.ts';
import type { WarningChange } from '../../shared/trim/warning-tracker.ts';
import { ApiError, call } from '../api.ts';
import { BenchAudio, DEMO_INPUT, listDevices, type AudioDevices } from '../audio/bench-audio.ts';
import { problemText } from '../problem-text.ts';
import type { GeneratorCommand, MeterSettings } from '../worker/messages.ts';
import { AudioSetup, type AudioChoice } from './AudioSetup.tsx';
import { CalibrationBadge } from './CalibrationBadge.tsx';
import { GeneratorControls } from './GeneratorControls.tsx';
import { LiveReadout } from './LiveReadout.tsx';
import { SafetyNotice } from './SafetyNotice.tsx';
import { SpectrumPlot } from './SpectrumPlot.tsx';
import { StationView } from './StationView.tsx';
import { TrimPanel, type UnsettledChoice } from './TrimPanel.tsx';
import { UnitEntry } from './UnitEntry.tsx';
import { UnitSheet } from './UnitSheet.tsx';

const HARMONIC_COUNT = 10;

export function App() {
  const [station, setStation] = useState<Station | null>(null);
  const [procedures, setProcedures] = useState<StoredProcedure[]>([]);
  const [recordsProblem, setRecordsProblem] = useState<string | null>(null);

  const [devices, setDevices] = useState<AudioDevices | null>(null);
  const [choice, setChoice] = useState<AudioChoice>({
    inputDeviceId: '',
    outputDeviceId: '',
    sampleRateHz: 48000,
    channel: 0,
    mainsHz: 50,
    sharedClock: false,
  });
  const [audio, setAudio] = useState<BenchAudio | null>(null);
  const audioRef = useRef<BenchAudio | null>(null);
  const [audioProblem, setAudioProblem] = useState<string | null>(null);
  const [discontinuities, setDiscontinuities] = useState(0);
  const [generator, setGeneratorState] = useState<GeneratorCommand>({ frequencyHz: 1000, levelDbfs: -20, on: false });
  // Until a unit's procedure (or the technician) sets the stimulus, the fields show nothing rather
  // than a made-up tone.
  const [generatorSet, setGeneratorSet] = useState(false);
  const [stimulusNote, setStimulusNote] = useState<string | null>(null);
  // Where the keyboard goes next: the next Enter must record or open a unit, never mute.
  const positionInputRef = useRef<HTMLInputElement>(null);
  const serialInputRef = useRef<HTMLInputElement>(null);
  /** The position typed in the trim step; on the demo bench it turns the virtual trimmer. */
  const [trimmerTurns, setTrimmerTurns] = useState(0);

  /** The chosen audio setup in the words a calibration stores; `rateHz` is the rate it runs at. */
  const describeChoice = useCallback(
    (rateHz: number): StationAudioSetup => {
      const label = (id: string, list: MediaDeviceInfo[] | undefined, fallback: string) =>
        id === DEMO_INPUT ? 'Demo bench' : (list?.find((d) => d.deviceId === id)?.label || fallback);
      return {
        inputDeviceId: choice.inputDeviceId,
        inputDeviceLabel: label(choice.inputDeviceId, devices?.inputs, choice.inputDeviceId === '' ? 'System default input' : 'Input'),
        inputChannel: choice.channel,
        outputDeviceId: choice.outputDeviceId,
        outputDeviceLabel: label(choice.outputDeviceId, devices?.outputs, choice.outputDeviceId === '' ? 'System default output' : 'Output'),
        sampleRateHz: rateHz,
      };
    },
    [choice.inputDeviceId, choice.outputDeviceId, choice.channel, devices],
  );

  const [reading, setReading] = useState<Reading | null>(null);
  /** When the latest reading arrived (ms): a stream that stops delivering must not leave a "settled" reading behind. */
  const [readingAt, setReadingAt] = useState(0);
  const [spectrum, setSpectrum] = useState<{ hz: Float32Array; dbfs: Float32Array } | null>(null);

  const [detail, setDetail] = useState<RunDetail | null>(null);
  const [view, setView] = useState<'bench' | 'sheet' | 'station'>('bench');
  /** The station's settings, latest calibration and chain check, as main holds them. */
  const [stationCalibration, setStationCalibration] = useState<StationCalibration | null>(null);
  const [sheetPdfPath, setSheetPdfPath] = useState<string | null>(null);
  const [sheetMessage, setSheetMessage] = useState<string | null>(null);

  useEffect(() => {
    Promise.all([call('describeStation', {}), call('listProcedures', {})])
      .then(([stationInfo, list]) => {
        setStation(stationInfo);
        setProcedures(list);
      })
      .catch((error: unknown) =>
        setRecordsProblem(problemText(error, 'The station and its procedures could not be loaded', 'Restart Trimbench; if this stays, report it.')),
      );
    call('getStationCalibration', {})
      .then(setStationCalibration)
      .catch((error: unknown) =>
        setRecordsProblem(problemText(error, 'The station settings could not be read', 'Correct or restore the settings file named, then restart Trimbench.')),
      );
    void refreshDevices();
  }, []);

  // At start the station's saved mains and default audio are the choice, once its devices are
  // listed (a default whose device is not connected is left aside: the bench keeps the system's).
  // A choice the technician made before the settings arrived is theirs: the defaults never replace it.
  const defaultAudioApplied = useRef(false);
  const chooseAudio = useCallback((next: AudioChoice) => {
    defaultAudioApplied.current = true;
    setChoice(next);
  }, []);
  useEffect(() => {
    if (defaultAudioApplied.current || !stationCalibration || !devices) return;
    defaultAudioApplied.current = true;
    const { defaultAudio, mainsHz } = stationCalibration.settings;
    const present = (id: string, list: MediaDeviceInfo[]) => id === '' || list.some((d) => d.deviceId === id);
    const usable =
      defaultAudio !== null &&
      (defaultAudio.inputDeviceId === DEMO_INPUT || present(defaultAudio.inputDeviceId, devices.inputs)) &&
      present(defaultAudio.outputDeviceId, devices.outputs);
    setChoice((current) => ({
      ...current,
      mainsHz,
      ...(usable && defaultAudio
        ? {
            inputDeviceId: defaultAudio.inputDeviceId,
            outputDeviceId: defaultAudio.outputDeviceId,
            channel: defaultAudio.inputChannel,
            sampleRateHz: defaultAudio.sampleRateHz,
          }
        : {}),
    }));
  }, [stationCalibration, devices]);

  async function refreshDevices() {
    try {
      const listed = await listDevices();
      setDevices(listed);
      // With no interface set up the demo bench is the input, so the whole trim can be shown.
      if (listed.inputs.length === 0) setChoice((current) => (current.inputDeviceId === '' ? { ...current, inputDeviceId: DEMO_INPUT } : current));
    } catch (error) {
      setAudioProblem(problemText(error, 'The audio devices could not be listed', 'The demo bench is chosen instead; reconnect the interface, then choose it under Input.'));
      setChoice((current) => ({ ...current, inputDeviceId: DEMO_INPUT }));
    }
  }

  const applyGenerator = useCallback((command: GeneratorCommand) => {
    setGeneratorState(command);
    setGeneratorSet(true);
    generatorRef.current = command;
    audioRef.current?.setGenerator(command);
  }, []);

  const mute = useCallback(() => {
    setGeneratorState((current) => ({ ...current, on: false }));
    generatorRef.current = { ...generatorRef.current, on: false };
    audioRef.current?.mute();
  }, []);

  const generatorRef = useRef(generator);
  generatorRef.current = generator;
  const generatorSetRef = useRef(generatorSet);
  generatorSetRef.current = generatorSet;

  /** On/off from the generator panel, the trim step's button or the G key. */
  const toggleGenerator = useCallback(() => {
    if (generatorRef.current.on) return mute();
    if (!audioRef.current || !generatorSetRef.current) return;
    applyGenerator({ ...generatorRef.current, on: true });
    // Focus leaves the button that turned it on (whose next Enter would mute it) for the field
    // whose Enter is the next step: record a point, or open a unit.
    (positionInputRef.current ?? serialInputRef.current)?.focus();
  }, [applyGenerator, mute]);

  // Esc mutes the generator from anywhere, even while typing in a field. G turns it on or off
  // wherever G cannot be typed: outside text fields, and in the trim position field (numbers only).
  useEffect(() => {
    const onKey = (event: KeyboardEvent) => {
      if (event.key === 'Escape') return mute();
      if ((event.key === 'g' || event.key === 'G') && !event.ctrlKey && !event.altKey && !event.metaKey) {
        const target = event.target as HTMLElement | null;
        const typing = target !== null && (target.isContentEditable || /^(INPUT|TEXTAREA|SELECT)$/.test(target.tagName));
        if (typing && target !== positionInputRef.current) return;
        event.preventDefault();
        toggleGenerator();
      }
    };
    window.addEventListener('keydown', onKey, { capture: true });
    return () => window.removeEventListener('keydown', onKey, { capture: true });
  }, [mute, toggleGenerator]);
  const [starting, setStarting] = useState(false);

  function clearLiveState() {
    setReading(null);
    setSpectrum(null);
    setDiscontinuities(0);
  }

  async function startCapture() {
    if (starting || audioRef.current) return; // one capture at a time, even on a double click
    setAudioProblem(null);
    clearLiveState();
    setStarting(true);
    try {
      let instance: BenchAudio | null = null;
      // Events from an instance that is no longer the current one are ignored.
      const current = () => instance !== null && audioRef.current === instance;
      instance = await BenchAudio.start(
        {
          inputDeviceId: choice.inputDeviceId || null,
          outputDeviceId: choice.outputDeviceId || null,
          sampleRateHz: choice.sampleRateHz,
          meter: meterSettings,
        },
        {
          onReading: (next, hz, dbfs) => {
            if (!current()) return;
            setReading(next);
            setReadingAt(Date.now());
            setSpectrum({ hz, dbfs });
          },
          onStatus: (status) => current() && setDiscontinuities(status.discontinuities),
          onProblem: (message) => {
            if (!current()) return;
            setAudioProblem(message);
            setGeneratorState((g) => ({ ...g, on: false }));
            // Nothing may be recorded from a reading taken before the device went away.
            setReading(null);
            audioRef.current = null;
            setAudio(null);
          },
        },
      );
      audioRef.current = instance;
      setAudio(instance);
      instance.setGenerator(generatorRef.current);
      void refreshDevices(); // labels appear once permission is granted
    } catch (error) {
      setAudioProblem(problemText(error, 'Capture could not start', 'Check the input and output choices, then press Start capture again.'));
    } finally {
      setStarting(false);
    }
  }

  function stopCapture() {
    audioRef.current?.stop();
    audioRef.current = null;
    setAudio(null);
    clearLiveState();
    setGeneratorState((current) => ({ ...current, on: false }));
  }

  useEffect(() => {
    audio?.trimmerMoved(trimmerTurns);
  }, [audio, trimmerTurns]);

  async function openRun(request: { serial: string; procedureId: number; operator: string; retestReason?: string }) {
    // Main refuses a procedure that requires a calibration unless it holds for this setup.
    const opened = await call('openRun', { ...request, setup });
    setDetail(opened);
    const procedure = opened.procedure;
    if (procedure) {
      // The stimulus comes from the procedure; it stays off until the technician turns it on.
      applyGenerator({ frequencyHz: procedure.trim.stimulusHz, levelDbfs: procedure.trim.stimulusLevelDbfs, on: false });
    }
  }

  async function recordPoint(position: number, current: Reading, live: LiveSeries, unsettled: UnsettledChoice) {
    if (!detail) return;
    // Shown as recorded only after main has written it (and its assessment) to the database.
    // `unsettled` is 'record-marked' only from the deliberate "Record unsettled…" confirmation.
    const { point, assessment, warningLog } = await call('recordTrimPoint', {
      runId: detail.run.id,
      position,
      reading: current,
      live,
      stimulus: generatorRef.current,
      unsettled,
    });
    setDetail((d) => {
      if (!d) return d;
      const warningsRaised = [...d.warningsRaised];
      for (const warning of assessment.warnings) {
        if (!warningsRaised.some((w) => w.id === warning.id)) warningsRaised.push({ ...warning, afterSequence: point.sequence });
      }
      return { ...d, trimPoints: [...d.trimPoints, point], assessment, warningsRaised, warningLog };
    });
  }

  /** The technician confirms an unsettled point: it joins the fit (main re-assesses and logs it). */
  async function includePoint(pointId: number) {
    if (!detail) return;
    const { point, assessment, warningLog } = await call('includeUnsettledPoint', { runId: detail.run.id, pointId });
    setDetail((d) => (d ? { ...d, trimPoints: d.trimPoints.map((p) => (p.id === point.id ? point : p)), assessment, warningLog } : d));
  }

  /** Live warnings raised and cleared between points go into the run's log. */
  async function logWarningChanges(changes: WarningChange[]) {
    if (!detail || changes.length === 0) return;
    const { warningLog } = await call('logWarningChanges', { runId: detail.run.id, changes });
    setDetail((d) => (d && d.run.id === detail.run.id ? { ...d, warningLog } : d));
  }

  async function recordWarmCheck(request: { coldTemperatureC: number; warmTemperatureC: number; reading: Reading }) {
    if (!detail) throw new ApiError('No unit is open. Open a unit first.');
    const warmCheck = await call('recordWarmCheck', { runId: detail.run.id, ...request, stimulus: generatorRef.current });
    setDetail((d) => (d ? { ...d, warmCheck } : d));
    return warmCheck;
  }

  function closeUnit() {
    // No unit, no tone: the generator is muted with the unit it was set up for.
    mute();
    setDetail(null);
  }

  /** Refused with the reasons when the run has not earned a PASS, unless it is finished as a FAIL. */
  async function finishRun(asFailure: boolean) {
    if (!detail) return;
    const finished = await call('finishRun', { runId: detail.run.id, asFailure });
    mute();
    setDetail(finished);
    setSheetPdfPath(finished.run.sheetPdfPath);
    setSheetMessage(null);
    setView('sheet');
  }

  // On one interface clock the stimulus is planned to whole cycles per frame, clear of mains; planned
  // again whenever the rate, the mains or the clocking changes (e.g. when capture starts at the
  // device's own rate).
  const openProcedure = detail?.procedure;
  const captureRateHz = audio?.sampleRateHz ?? null;
  useEffect(() => {
    if (!openProcedure) return;
    const { stimulusHz } = openProcedure.trim;
    if (!choice.sharedClock) {
      setStimulusNote(null);
      if (generatorRef.current.frequencyHz !== stimulusHz) applyGenerator({ ...generatorRef.current, frequencyHz: stimulusHz });
      return;
    }
    try {
      const plan = planTestFrequency({
        targetHz: stimulusHz,
        sampleRateHz: captureRateHz ?? choice.sampleRateHz,
        mainsHz: choice.mainsHz,
        harmonicCount: HARMONIC_COUNT,
      });
      setStimulusNote(plan.reason);
      if (generatorRef.current.frequencyHz !== plan.frequencyHz) applyGenerator({ ...generatorRef.current, frequencyHz: plan.frequencyHz });
    } catch (error) {
      // Nothing coherent lies close enough to the procedure's frequency: play it exactly, analysed windowed.
      // The planner's NoCoherentFrequency explains itself; any other throw is a bug, kept off the bench.
      const why = error instanceof NoCoherentFrequency ? error.message : problemText(error, 'no coherent frequency was planned', 'Nothing to do.');
      setStimulusNote(`Playing the procedure's ${stimulusHz} Hz exactly, analysed windowed: ${why}`);
      if (generatorRef.current.frequencyHz !== stimulusHz) applyGenerator({ ...generatorRef.current, frequencyHz: stimulusHz });
    }
  }, [openProcedure, choice.sharedClock, choice.mainsHz, choice.sampleRateHz, captureRateHz, applyGenerator]);

  // Back from the sheet, the next unit's serial is what comes next (the scanner types into it).
  const returnedFromSheet = useRef(false);
  useEffect(() => {
    if (view !== 'bench' || !returnedFromSheet.current) return;
    returnedFromSheet.current = false;
    serialInputRef.current?.focus();
  }, [view]);

  // The sheet is saved as PDF as soon as it is on screen (the PDF is made from this view).
  useEffect(() => {
    if (view !== 'sheet' || !detail || sheetPdfPath) return;
    let cancelled = false;
    const frame = requestAnimationFrame(() => {
      call('saveSheetPdf', { runId: detail.run.id })
        .then((saved) => !cancelled && setSheetPdfPath(saved.path))
        .catch(
          (error: unknown) =>
            !cancelled && setSheetMessage(`The PDF was not saved. ${problemText(error, 'Saving the unit sheet failed', 'Go back and open the sheet again to retry.')}`),
        );
    });
    return () => {
      cancelled = true;
      cancelAnimationFrame(frame);
    };
  }, [view, detail, sheetPdfPath]);

  async function printSheet() {
    if (!detail) return;
    try {
      const { printed } = await call('printSheet', { runId: detail.run.id });
      setSheetMessage(printed ? null : 'Printing was cancelled.');
    } catch (error) {
      setSheetMessage(problemText(error, 'Printing failed', 'Save the PDF and print it from there, or try Print again.'));
    }
  }

  const procedure = detail?.procedure;

  async function saveStationSettings(next: StationSettings) {
    const saved = await call('saveStationSettings', next);
    setStationCalibration(saved);
    setChoice((current) => ({ ...current, mainsHz: saved.settings.mainsHz }));
    // A new name shows in the top bar at once (main reads it from the settings).
    setStation((current) => (current ? { ...current, stationName: saved.settings.stationName } : current));
  }

  // What a calibration holds for: the devices and the rate capture runs at (none without capture).
  const captureRate = audio?.sampleRateHz ?? null;
  const setup = useMemo(() => (captureRate === null ? null : describeChoice(captureRate)), [captureRate, describeChoice]);
  const choiceSetup = useMemo(() => describeChoice(captureRate ?? choice.sampleRateHz), [captureRate, choice.sampleRateHz, describeChoice]);
  const status = stationCalibration
    ? calibrationStatus(stationCalibration.calibration, setup, new Date(), stationCalibration.settings.calibrationExpiryDays)
    : null;

  // Levels in dBu, and the chain's floor for the at-floor flag, only while the calibration holds for
  // the setup in use; its chain check counts only when it was made with that calibration.
  const calibrationInUse = status?.state === 'valid' ? (stationCalibration?.calibration ?? null) : null;
  const inputCalibration = useMemo<LevelCalibration | null>(
    () => (calibrationInUse ? { dbuAtFullScale: calibrationInUse.input.dbuAtFullScale } : null),
    [calibrationInUse],
  );
  const outputCalibration = useMemo<LevelCalibration | null>(
    () => (calibrationInUse ? { dbuAtFullScale: calibrationInUse.output.dbuAtFullScale } : null),
    [calibrationInUse],
  );
  const chainCheckInUse = calibrationInUse && stationCalibration?.chainCheck?.calibrationId === calibrationInUse.id ? stationCalibration.chainCheck : null;
  const chainFloorThdDb = chainCheckInUse ? (residualNear(chainCheckInUse.result, generator.frequencyHz)?.thdDb ?? null) : null;

  const meterSettings = useMemo<MeterSettings>(
    () => ({
      channel: choice.channel,
      expectedFundamentalHz: generator.on ? generator.frequencyHz : null,
      harmonicCount: HARMONIC_COUNT,
      mainsHz: choice.mainsHz,
      stimulusLocked: choice.sharedClock,
      chainFloorThdDb,
    }),
    [choice.channel, choice.mainsHz, choice.sharedClock, generator.on, generator.frequencyHz, chainFloorThdDb],
  );

  // The meter follows the stimulus (long frames for low tones) and the station's mains and clocking.
  useEffect(() => {
    audio?.configureMeter(meterSettings);
  }, [audio, meterSettings]);


  const stationHeadingFocus = useRef(false);
  function openStation() {
    stationHeadingFocus.current = true;
    setView('station');
    // Read afresh: the view shows the station as main holds it now (its expiry moves with the clock).
    call('getStationCalibration', {}).then(setStationCalibration, (error: unknown) =>
      setRecordsProblem(problemText(error, 'The station settings could not be read', 'Correct or restore the settings file named, then restart Trimbench.')),
    );
  }
  // The demo bench stands in for a loopback while the Station view is open (calibration and chain
  // check practice), and for the simulated unit everywhere else: one owner, the view.
  useEffect(() => audio?.setDemoMode(view === 'station' ? 'loopback' : 'unit'), [audio, view]);
  function leaveStation() {
    // No reference tone outlives the view it was played from.
    mute();
    setView('bench');
  }
  useEffect(() => {
    if (view !== 'station' || !stationHeadingFocus.current) return;
    stationHeadingFocus.current = false;
    // Keyboard: the view starts at its heading, so Tab runs through it from the top.
    document.getElementById('station-heading')?.focus();
  }, [view]);

  const audioPanel = (
    <AudioSetup
      devices={devices}
      choice={choice}
      onChange={chooseAudio}
      capturing={audio !== null}
      starting={starting}
      capturePath={audio?.capturePath ?? null}
      sampleRateHz={audio?.sampleRateHz ?? null}
      discontinuities={discontinuities}
      onStart={() => void startCapture()}
      onStop={stopCapture}
      onRefresh={() => void refreshDevices()}
    />
  );

  if (view === 'sheet' && detail) {
    return (
      <UnitSheet
        detail={detail}
        pdfPath={sheetPdfPath}
        message={sheetMessage}
        onPrint={() => void printSheet()}
        onBack={() => {
          setView('bench');
          setDetail(null);
          setSheetPdfPath(null);
          returnedFromSheet.current = true;
        }}
      />
    );
  }

  return (
    <div className="app">
      <header className="topbar">
        <h1>Trimbench</h1>
        <span className="hint">{station ? `Station ${station.stationName}` : ''}</span>
        <CalibrationBadge status={status} onOpen={openStation} />
        {/* In the Station view its own "Back to the bench" takes this place. */}
        {view !== 'station' && (
          <button type="button" data-testid="open-station" onClick={openStation}>
            Station…
          </button>
        )}
        <button type="button" className={generator.on ? 'mute live' : 'mute'} onClick={mute} data-testid="mute" disabled={!generator.on}>
          {generator.on ? 'Mute generator (Esc)' : 'Generator muted'}
        </button>
      </header>
      <SafetyNotice />
      {(recordsProblem ?? station?.recordsProblem) && (
        <p className="problem banner" role="alert" data-testid="records-problem">
          {recordsProblem ?? station?.recordsProblem}
        </p>
      )}
      {audioProblem && (
        <p className="problem banner" role="alert" data-testid="audio-problem">
          {audioProblem}
        </p>
      )}
      {view === 'station' ? (
        <StationView
          stationCalibration={stationCalibration}
          status={status}
          audioPanel={audioPanel}
          audio={audio}
          reading={reading}
          readingAt={readingAt}
          generatorOn={generator.on}
          applyGenerator={applyGenerator}
          mute={mute}
          setup={setup}
          choiceSetup={choiceSetup}
          procedures={procedures}
          onSaveSettings={saveStationSettings}
          onRecorded={setStationCalibration}
          onBack={leaveStation}
          onProceduresChanged={() =>
            void call('listProcedures', {}).then(setProcedures, (error: unknown) =>
              setRecordsProblem(problemText(error, 'The procedures could not be read', 'Open the Station view again.')),
            )
          }
        />
      ) : (
        <main className="columns">
          <div className="column">
            {audioPanel}
            <GeneratorControls
              command={generator}
              set={generatorSet}
              onChange={applyGenerator}
              onToggle={toggleGenerator}
              available={audio !== null}
              note={stimulusNote}
            />
          </div>
          <div className="column wide">
            <LiveReadout
              reading={reading}
              generatorOn={generator.on}
              limitThdDb={detail && procedure ? procedure.trim.limitThdDb : null}
              harmonicCount={HARMONIC_COUNT}
              inputCalibration={inputCalibration}
              stimulusCheck={detail && procedure && reading ? checkStimulus(reading, generator, procedure.trim) : null}
            />
            <SpectrumPlot spectrumHz={spectrum?.hz ?? null} spectrumDbfs={spectrum?.dbfs ?? null} />
          </div>
          <div className="column">
            {detail && procedure ? (
              <TrimPanel
                key={detail.run.id}
                detail={detail}
                procedure={procedure}
                reading={reading}
                readingAt={readingAt}
                inputCalibration={inputCalibration}
                outputCalibration={outputCalibration}
                onRecord={recordPoint}
                positionInputRef={positionInputRef}
                generator={generator}
                generatorAvailable={audio !== null}
                onToggleGenerator={toggleGenerator}
                onWarmCheck={recordWarmCheck}
                onPositionChange={setTrimmerTurns}
                onFinish={finishRun}
                onIncludePoint={includePoint}
                onWarningChanges={logWarningChanges}
                onClose={closeUnit}
              />
            ) : (
              <UnitEntry procedures={procedures} onOpen={openRun} busy={procedures.length === 0} serialInputRef={serialInputRef} />
            )}
          </div>
        </main>
      )}
    </div>
  );
}
