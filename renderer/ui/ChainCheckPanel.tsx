// Placeholder until R2's chain check runner is merged: same props, nothing measured.
import type { ChainLimits } from '../../shared/calibration/chain-check.ts';
import type { AudioSetup, Calibration, ChainCheckRecord } from '../../shared/calibration/station-calibration.ts';
import type { StationCalibration, StoredProcedure } from '../../shared/ipc/contract.ts';
import type { Reading } from '../../shared/measurement/reading.ts';
import type { BenchAudio } from '../audio/bench-audio.ts';
import type { GeneratorCommand } from '../worker/messages.ts';

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

export function ChainCheckPanel(_props: ChainCheckPanelProps) {
  return (
    <section className="panel" aria-label="Chain check">
      <h2>Chain check</h2>
      <p className="hint">Chain check: not built yet</p>
    </section>
  );
}
