import { useMemo, useRef, type RefObject } from 'react';
import type { RunDetail } from '../../shared/ipc/contract.ts';
import type { LevelCalibration } from '../../shared/levels.ts';
import type { Reading } from '../../shared/measurement/reading.ts';
import { isCheckStep, type StationLevels } from '../../shared/procedures/check-steps.ts';
import type { PlannedStep } from '../../shared/procedures/run-plan.ts';
import type { GeneratorCommand } from '../worker/messages.ts';
import { CheckStepPanel, type ChannelLive } from './CheckStepPanel.tsx';
import { MaxLevelPanel } from './MaxLevelPanel.tsx';
import { ResponseStepPanel } from './ResponseStepPanel.tsx';
import type { BenchAudio } from '../audio/bench-audio.ts';
import { NoticePanel } from './NoticePanel.tsx';
import { RingingPanel } from './RingingPanel.tsx';
import { StepWalk } from './StepWalk.tsx';
import { TrimPanel } from './TrimPanel.tsx';
import type { useRun } from './useRun.ts';
import type { useWalk } from './useWalk.ts';

/** The open run: its step walk, with the panel that measures the current step. */
export function RunView({
  detail,
  run,
  walk,
  planned,
  reading,
  readingAt,
  secondReading,
  generator,
  generatorAvailable,
  audio,
  onSweeping,
  onToggleGenerator,
  applyGenerator,
  mute,
  stimulusNote,
  sampleRateHz,
  levels,
  inputCalibration,
  outputCalibration,
  positionInputRef,
  onPositionChange,
  onFinished,
  onClose,
}: {
  detail: RunDetail;
  run: ReturnType<typeof useRun>;
  walk: ReturnType<typeof useWalk>;
  /** The current step as the run plan gives it on this station. */
  planned: PlannedStep | null;
  reading: Reading | null;
  readingAt: number;
  /** The unit's channel 2, read on the second input when one is chosen. */
  secondReading: ChannelLive | null;
  generator: GeneratorCommand;
  generatorAvailable: boolean;
  /** The running capture: a response step plays and captures its sweep through it. */
  audio: BenchAudio | null;
  onSweeping(playing: boolean): void;
  onToggleGenerator(): void;
  /** Sets the generator (a max-level step raises its level), and mutes it. */
  applyGenerator(command: GeneratorCommand): void;
  mute(): void;
  stimulusNote: string | null;
  /** The rate the generator plays at (capture's, or the chosen one before it starts). */
  sampleRateHz: number;
  levels: StationLevels | null;
  inputCalibration: LevelCalibration | null;
  outputCalibration: LevelCalibration | null;
  positionInputRef: RefObject<HTMLInputElement | null>;
  onPositionChange(position: number): void;
  onFinished(): void;
  onClose(): void;
}) {
  const primaryRef = useRef<HTMLButtonElement>(null);
  const step = useMemo(() => detail.procedureFile.steps.find((s) => s.id === walk.current) ?? null, [detail.procedureFile, walk.current]);
  const latest = (stepId: string) => detail.stepResults.filter((r) => r.stepId === stepId).at(-1) ?? null;

  let panel = null;
  if (step && planned && walk.mode === 'measure') {
    if (step.kind === 'notice') {
      panel = <NoticePanel acknowledgement={step.acknowledgement} pending={run.pending} primaryRef={primaryRef} onAcknowledge={() => run.acknowledgeNotice(step.id)} />;
    } else if (step.kind === 'trim') {
      panel = (
        <TrimPanel
          key={`${detail.run.id}/${step.id}`}
          detail={detail}
          trim={detail.procedure.trim}
          reading={reading}
          readingAt={readingAt}
          inputCalibration={inputCalibration}
          outputCalibration={outputCalibration}
          onRecord={(position, current, live, unsettled) => run.recordPoint(position, current, live, generator, unsettled)}
          positionInputRef={positionInputRef}
          generator={generator}
          generatorAvailable={generatorAvailable}
          onToggleGenerator={onToggleGenerator}
          onWarmCheck={(request) => run.recordWarmCheck(request, generator)}
          onPositionChange={onPositionChange}
          onIncludePoint={run.includePoint}
          onWarningChanges={(changes) => void run.logWarningChanges(changes)}
          onTrimDone={async () => void (await run.completeTrim(step.id))}
          result={latest(step.id)}
        />
      );
    } else if (step.kind === 'ringing') {
      panel = (
        <RingingPanel
          key={`${detail.run.id}/${step.id}`}
          step={step}
          planned={planned}
          generator={generator}
          generatorAvailable={generatorAvailable}
          sampleRateHz={sampleRateHz}
          onToggleGenerator={onToggleGenerator}
          pending={run.pending}
          primaryRef={primaryRef}
          result={latest(step.id)}
          onAttach={() => run.attachScopeCapture(step.id)}
        />
      );
    } else if (step.kind === 'max-level') {
      panel = (
        <MaxLevelPanel
          key={`${detail.run.id}/${step.id}`}
          step={step}
          planned={planned}
          reading={reading}
          generator={generator}
          generatorAvailable={generatorAvailable}
          apply={applyGenerator}
          mute={mute}
          levels={levels}
          stimulusNote={stimulusNote}
          pending={run.pending}
          primaryRef={primaryRef}
          onRecord={(points) => run.recordMaxLevel(step.id, points)}
        />
      );
    } else if (step.kind === 'response') {
      panel = (
        <ResponseStepPanel
          key={`${detail.run.id}/${step.id}`}
          step={step}
          planned={planned}
          audio={audio}
          onSweeping={onSweeping}
          levels={levels}
          outputCalibration={outputCalibration}
          pending={run.pending}
          primaryRef={primaryRef}
          onRecord={async (samples, sampleRateHz) => {
            // The plot and the verdict are the step's stored result: shown at once, before going on.
            walk.showAfterRecording(step.id);
            return run.recordResponse(step.id, samples, sampleRateHz);
          }}
        />
      );
    } else if (isCheckStep(step)) {
      panel = (
        <CheckStepPanel
          key={`${detail.run.id}/${step.id}`}
          step={step}
          planned={planned}
          reading={reading}
          readingAt={readingAt}
          secondReading={secondReading}
          generator={generator}
          generatorAvailable={generatorAvailable}
          onToggleGenerator={onToggleGenerator}
          levels={levels}
          outputCalibration={outputCalibration}
          stimulusNote={stimulusNote}
          pending={run.pending}
          primaryRef={primaryRef}
          onRecord={(stimulus, readings) => run.recordCheckStep(step.id, stimulus, readings)}
        />
      );
    }
  }

  return (
    <StepWalk
      detail={detail}
      walk={walk}
      pending={run.pending}
      primaryRef={primaryRef}
      onFinish={async (asFailure) => {
        const finished = await run.finish(asFailure);
        if (finished) onFinished();
        return finished;
      }}
      onClose={onClose}
    >
      {panel}
    </StepWalk>
  );
}
