// The shape of one measurement, shared by the worker, the readout, the records and the CLI.
// Field names follow the `analyze` / `capture-check` JSON so a number means the same everywhere.

/** Levels below this are shown and stored as this value, so every number stays finite (JSON has no −∞). */
export const FLOOR_DB = -300;

export type ReadingFlag = 'no-signal' | 'clipping';

export interface FundamentalTone {
  frequencyHz: number;
  levelDbfs: number;
  /** Phase of A·cos(2πft + φ) at the frame's first sample, degrees in (−180, 180]. */
  phaseDeg: number;
}

export interface HarmonicLevel {
  order: number;
  frequencyHz: number;
  levelDbc: number;
  /** φn − n·φ1, degrees in (−180, 180]: unchanged by a time shift of the frame. */
  phaseDeg: number;
}

export interface HarmonicAnalysis {
  fundamental: FundamentalTone;
  /** Orders 2..N that lie below Nyquist; orders above it are left out. */
  harmonics: HarmonicLevel[];
  thdPercent: number;
  thdDb: number;
  flags: ReadingFlag[];
}

export interface Reading extends HarmonicAnalysis {
  sequence: number;
  sampleRateHz: number;
  frameSize: number;
  /** Capture discontinuities seen since capture started (none lie inside this reading's frame). */
  discontinuities: number;
  settled: boolean;
  /** 0..1, how close successive readings are to agreeing. */
  settleProgress: number;
}

export function createHarmonicAnalysis(): HarmonicAnalysis {
  return {
    fundamental: { frequencyHz: 0, levelDbfs: FLOOR_DB, phaseDeg: 0 },
    harmonics: [],
    thdPercent: 0,
    thdDb: FLOOR_DB,
    flags: [],
  };
}
