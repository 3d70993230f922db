import { useCallback, useEffect, useMemo, useRef, useState } from 'react';
import { checkStimulus } from '../../shared/records/stimulus-check.ts';
import { generatorWanted, runPlan } from '../../shared/procedures/run-plan.ts';
import { noiseBandFor, runLevels } from '../../shared/procedures/check-steps.ts';
import type { StationSettings } from '../../shared/calibration/station-settings.ts';
import type { BenchAudio } from '../audio/bench-audio.ts';
import type { MeterSettings } from '../worker/messages.ts';
import { AudioSetup } from './AudioSetup.tsx';
import { CalibrationBadge } from './CalibrationBadge.tsx';
import { GeneratorControls } from './GeneratorControls.tsx';
import { LiveReadout } from './LiveReadout.tsx';
import { RunView } from './RunView.tsx';
import { SafetyNotice } from './SafetyNotice.tsx';
import { SheetScreen } from './SheetScreen.tsx';
import { SpectrumPlot } from './SpectrumPlot.tsx';
import { StationView } from './StationView.tsx';
import { UnitEntry } from './UnitEntry.tsx';
import { useAudioChoice } from './useAudioChoice.ts';
import { useCalibrationInUse } from './useCalibrationInUse.ts';
import { useCapture } from './useCapture.ts';
import { useGenerator } from './useGenerator.ts';
import { useRun, type OpenRunRequest } from './useRun.ts';
import { useStation } from './useStation.ts';
import { HARMONIC_COUNT, useStepStimulus } from './useStepStimulus.ts';
import { useWalk } from './useWalk.ts';

export function App() {
  const station = useStation();
  const [view, setView] = useState<'bench' | 'sheet' | 'station'>('bench');
  // Where the keyboard goes next: the next Enter must record or open a unit, never mute.
  const positionInputRef = useRef<HTMLInputElement>(null);
  const serialInputRef = useRef<HTMLInputElement>(null);
  /** The position typed in the trim step; on the demo bench it turns the virtual trimmer. */
  const [trimmerTurns, setTrimmerTurns] = useState(0);

  const audioRef = useRef<BenchAudio | null>(null);
  /** A response step's sweep is playing: the header's mute stops it, like Esc. */
  const [sweeping, setSweeping] = useState(false);
  // Focus leaves the button that turned the generator on (whose next Enter would mute it) for the
  // field whose Enter is the next step: record a point, record a check, or open a unit.
  const afterTurnedOn = useCallback(() => {
    const next = positionInputRef.current ?? document.querySelector<HTMLElement>('[data-step-primary]') ?? serialInputRef.current;
    next?.focus();
  }, []);
  const generator = useGenerator(audioRef, positionInputRef, afterTurnedOn);
  const [audioProblem, setAudioProblem] = useState<string | null>(null);
  const audioChoice = useAudioChoice(station.stationCalibration, setAudioProblem);
  const { choice } = audioChoice;
  const capture = useCapture({
    audioRef,
    choice,
    generatorNow: generator.now,
    onStopped: generator.markOff,
    onStarted: audioChoice.refreshDevices,
  });
  const audio = capture.audio;

  // What a calibration holds for: the devices and the rate capture runs at (none without capture).
  const captureRate = audio?.sampleRateHz ?? null;
  const setup = useMemo(() => (captureRate === null ? null : audioChoice.describeChoice(captureRate)), [captureRate, audioChoice.describeChoice]);
  const choiceSetup = useMemo(() => audioChoice.describeChoice(captureRate ?? choice.sampleRateHz), [captureRate, choice.sampleRateHz, audioChoice.describeChoice]);
  const calibration = useCalibrationInUse(station.stationCalibration, setup, generator.generator.frequencyHz);

  useEffect(() => {
    audio?.trimmerMoved(trimmerTurns);
  }, [audio, trimmerTurns]);

  const run = useRun(setup);
  const detail = run.detail;
  const walk = useWalk(detail);
  // The open run is planned and previewed with the calibration it was started under, as main judges it.
  const levelsOfRun = useMemo(() => (detail ? runLevels(detail.calibration, setup) : null), [detail?.calibration, setup?.secondInputChannel]); // eslint-disable-line react-hooks/exhaustive-deps
  const plan = useMemo(() => (detail ? runPlan(detail.procedureFile, levelsOfRun) : null), [detail?.procedureFile, levelsOfRun]); // eslint-disable-line react-hooks/exhaustive-deps
  const planned = plan?.find((p) => p.stepId === walk.current) ?? null;
  const stimulusNote = useStepStimulus({
    runId: detail?.run.id ?? null,
    step: walk.mode === 'measure' ? planned : null,
    sharedClock: choice.sharedClock,
    sampleRateHz: captureRate ?? choice.sampleRateHz,
    mainsHz: choice.mainsHz,
    apply: generator.apply,
    mute: generator.mute,
    current: generator.now,
  });

  const band = walk.mode === 'measure' && planned?.needs.kind === 'measure' ? planned.needs.band : null;
  const bandRate = captureRate ?? choice.sampleRateHz;
  const noiseBand = useMemo(() => (band ? noiseBandFor({ band }, bandRate) : null), [band?.lowHz, band?.highHz, bandRate]); // eslint-disable-line react-hooks/exhaustive-deps
  const meterSettings = useMemo<MeterSettings>(
    () => ({
      channel: choice.channel,
      secondChannel: choiceSetup.secondInputChannel ?? null,
      expectedFundamentalHz: generator.generator.on ? generator.generator.frequencyHz : null,
      harmonicCount: HARMONIC_COUNT,
      mainsHz: choice.mainsHz,
      stimulusLocked: choice.sharedClock,
      chainFloorThdDb: calibration.chainFloorThdDb,
      // A noise step's band: its figure is judged only over the band it states.
      ...(noiseBand && { bandLowHz: noiseBand.lowHz, bandHighHz: noiseBand.highHz }),
    }),
    [choice.channel, choiceSetup.secondInputChannel, choice.mainsHz, choice.sharedClock, generator.generator.on, generator.generator.frequencyHz, calibration.chainFloorThdDb, noiseBand],
  );
  // The meter follows the stimulus (long frames for low tones) and the station's mains and clocking.
  useEffect(() => {
    audio?.configureMeter(meterSettings);
  }, [audio, meterSettings]);

  async function openRun(request: OpenRunRequest) {
    await run.open(request, setup);
  }

  function closeUnit() {
    // No unit, no tone: the generator is muted with the unit it was set up for.
    generator.mute();
    run.close();
  }

  // Back from the sheet, the next unit's serial is what comes next (the scanner types into it).
  const returnedFromSheet = useRef(false);
  useEffect(() => {
    if (view !== 'bench' || !returnedFromSheet.current) return;
    returnedFromSheet.current = false;
    serialInputRef.current?.focus();
  }, [view]);

  async function saveStationSettings(next: StationSettings) {
    const saved = await station.saveSettings(next);
    audioChoice.setMainsHz(saved.settings.mainsHz);
  }

  const stationHeadingFocus = useRef(false);
  function openStation() {
    stationHeadingFocus.current = true;
    setView('station');
    // Read afresh: the view shows the station as main holds it now (its expiry moves with the clock).
    void station.readCalibration();
  }
  // The demo bench stands in for a loopback while the Station view is open (calibration and chain
  // check practice), and for the simulated unit everywhere else: one owner, the view.
  useEffect(() => audio?.setDemoMode(view === 'station' ? 'loopback' : 'unit'), [audio, view]);
  function leaveStation() {
    // No reference tone outlives the view it was played from.
    generator.mute();
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
      devices={audioChoice.devices}
      choice={choice}
      onChange={audioChoice.chooseAudio}
      capturing={audio !== null}
      starting={capture.starting}
      capturePath={audio?.capturePath ?? null}
      sampleRateHz={audio?.sampleRateHz ?? null}
      discontinuities={capture.discontinuities}
      onStart={() => void capture.start(meterSettings)}
      onStop={capture.stop}
      onRefresh={() => void audioChoice.refreshDevices()}
    />
  );

  if (view === 'sheet' && detail) {
    return (
      <SheetScreen
        detail={detail}
        onBack={() => {
          setView('bench');
          run.close();
          returnedFromSheet.current = true;
        }}
      />
    );
  }

  const procedure = detail?.procedure;
  const problem = audioProblem ?? capture.problem;
  return (
    <div className="app">
      <header className="topbar">
        <h1>Trimbench</h1>
        <span className="hint">{station.station ? `Station ${station.station.stationName}` : ''}</span>
        <CalibrationBadge status={calibration.status} onOpen={openStation} />
        {/* In the Station view its own "Back to the bench" takes this place. */}
        {view !== 'station' && (
          <button type="button" data-testid="open-station" onClick={openStation}>
            Station…
          </button>
        )}
        <button
          type="button"
          className={generator.generator.on || sweeping ? 'mute live' : 'mute'}
          onClick={generator.mute}
          data-testid="mute"
          disabled={!generator.generator.on && !sweeping}
        >
          {sweeping ? 'Stop the sweep (Esc)' : generator.generator.on ? 'Mute generator (Esc)' : 'Generator muted'}
        </button>
      </header>
      <SafetyNotice />
      {station.recordsProblem && (
        <p className="problem banner" role="alert" data-testid="records-problem">
          {station.recordsProblem}
        </p>
      )}
      {problem && (
        <p className="problem banner" role="alert" data-testid="audio-problem">
          {problem}
        </p>
      )}
      {view === 'station' ? (
        <StationView
          stationCalibration={station.stationCalibration}
          status={calibration.status}
          audioPanel={audioPanel}
          audio={audio}
          reading={capture.reading}
          readingAt={capture.readingAt}
          secondReading={capture.secondReading}
          generatorOn={generator.generator.on}
          applyGenerator={generator.apply}
          mute={generator.mute}
          setup={setup}
          choiceSetup={choiceSetup}
          procedures={station.procedures}
          onSaveSettings={saveStationSettings}
          onRecorded={station.setStationCalibration}
          onBack={leaveStation}
          onProceduresChanged={station.readProcedures}
        />
      ) : (
        <main className="columns">
          <div className="column">
            {audioPanel}
            <GeneratorControls
              command={generator.generator}
              set={generator.generatorSet}
              onChange={generator.apply}
              onToggle={generator.toggle}
              available={audio !== null}
              note={stimulusNote}
            />
          </div>
          <div className="column wide">
            <LiveReadout
              reading={capture.reading}
              generatorOn={generator.generator.on}
              generatorWanted={generatorWanted(walk.mode === 'measure' ? planned : null)}
              limitThdDb={walk.mode === 'measure' && planned?.kind === 'trim' && procedure ? procedure.trim.limitThdDb : null}
              harmonicCount={HARMONIC_COUNT}
              inputCalibration={calibration.inputCalibration}
              stimulusCheck={detail && procedure && capture.reading && planned?.kind === 'trim' ? checkStimulus(capture.reading, generator.generator, procedure.trim) : null}
            />
            <SpectrumPlot spectrumHz={capture.spectrum?.hz ?? null} spectrumDbfs={capture.spectrum?.dbfs ?? null} />
          </div>
          <div className="column">
            {detail ? (
              <RunView
                detail={detail}
                run={run}
                walk={walk}
                planned={planned}
                reading={capture.reading}
                readingAt={capture.readingAt}
                secondReading={capture.secondReading}
                generator={generator.generator}
                generatorAvailable={audio !== null}
                audio={audio}
                onSweeping={setSweeping}
                onToggleGenerator={generator.toggle}
                applyGenerator={generator.apply}
                mute={generator.mute}
                stimulusNote={stimulusNote}
                sampleRateHz={captureRate ?? choice.sampleRateHz}
                levels={levelsOfRun}
                inputCalibration={calibration.inputCalibration}
                outputCalibration={calibration.outputCalibration}
                positionInputRef={positionInputRef}
                onPositionChange={setTrimmerTurns}
                onFinished={() => {
                  generator.mute();
                  setView('sheet');
                }}
                onClose={closeUnit}
              />
            ) : (
              <UnitEntry procedures={station.procedures} onOpen={openRun} busy={station.procedures.length === 0} serialInputRef={serialInputRef} />
            )}
          </div>
        </main>
      )}
    </div>
  );
}
