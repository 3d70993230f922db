// The shape of one measurement, shared by the worker, the readout, the records and the CLI.
// Field names follow the `analyze` / `capture-check` JSON so a number means the same everywhere.

/** Levels below this are shown and stored as this value, so every number stays finite (JSON has no −∞). */
export const FLOOR_DB = -300;

/**
 * mains-coincident: a counted harmonic lies within the analyzer's resolvable distance of mains or
 * one of its multiples, so its level may hold hum too (see `mainsCoincidentOrders`).
 */
export type ReadingFlag = 'no-signal' | 'clipping' | 'at-floor' | 'mains-coincident';

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

export interface HumComponent {
  order: number;
  frequencyHz: number;
  levelDbfs: number;
}

export interface HumLevel {
  /** The mains fundamental as measured (it drifts a little from 50 or 60 Hz). */
  frequencyHz: number;
  levelDbfs: number;
  /** Mains fundamental and its 2nd and 3rd harmonics; a component hidden under a unit harmonic is left out. */
  components: HumComponent[];
}

/**
 * How the meter looked for hum in a frame, so that "no hum stands out" can be turned into an upper
 * bound for it (shared/procedures/check-steps.ts).
 */
export interface HumSearch {
  /** The nominal mains it looked at (the exact frequency is searched within ±0.5 Hz of it). */
  mainsHz: 50 | 60;
  /**
   * The mains orders it fitted. An order within a bin of the strongest tone or one of its multiples
   * is left out: that tone is read in its place (and reported only when it is a signal).
   */
  orders: number[];
  /**
   * The level (dBFS of a sine) a fitted order had to exceed to be reported as hum: 10 dB above the
   * noise in the analysis window's equivalent noise bandwidth, that noise taken as the mean over
   * the spectrum away from every tone (or −150 dBFS, whichever is higher). With `hum` null, no
   * fitted order exceeded it.
   */
  thresholdDbfs: number;
}

export interface HarmonicAnalysis {
  /** coherent: the stimulus frequency is known and fits whole cycles in the frame; windowed: it was estimated. */
  mode: 'coherent' | 'windowed';
  /**
   * The tones are read at this fundamental: the generator's frequency when it is known and
   * coherent, the peak nearest it when known otherwise, else the strongest tone found.
   */
  fundamental: FundamentalTone;
  /**
   * The strongest tone actually found in the frame, Hz, whatever the generator is set to: equal to
   * `fundamental.frequencyHz` when nothing was known, and the test of whether the tone read is the
   * generator's when it was.
   */
  measuredFundamentalHz: number;
  /** Orders 2..N that lie below Nyquist. */
  harmonics: HarmonicLevel[];
  /** Orders 2..N left out because they reach Nyquist. */
  harmonicsAboveNyquist: number[];
  thdPercent: number;
  thdDb: number;
  /** Everything but the fundamental inside the band, relative to the fundamental. */
  thdnPercent: number;
  thdnDb: number;
  sinadDb: number;
  /** Effective number of bits from SINAD (IEEE 1241): (SINAD − 1.76 dB) / 6.02 dB. */
  enob: number;
  /** Noise in the band with fundamental, harmonics and hum taken out, dBFS (AES17). */
  noiseDbfs: number;
  noiseAWeightedDbfs: number;
  /** Mains hum, or null when none stands above the noise. */
  hum: HumLevel | null;
  /**
   * What the hum was looked for with; null on a reading stored before the meter reported it, and on
   * a whole recording whose frames did not all agree that no hum stood out.
   */
  humSearch: HumSearch | null;
  /**
   * The band THD+N and noise were summed over, Hz (the top capped at Nyquist): a noise figure means
   * nothing without it, so a check step's limit is judged only on a reading of its own band.
   */
  bandHz: { lowHz: number; highHz: number };
  /** Harmonic orders that cannot be told apart from mains or its multiples (flag 'mains-coincident'). */
  mainsCoincidentOrders: number[];
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
  /**
   * Estimated seconds until a settled reading, if the coming readings agree: 0 when settled, null
   * when unknown (no signal). While it counts down after a break the reading's other numbers are
   * the last ones measured before the break (its `sequence` does not advance).
   */
  settleRemainingS: number | null;
  /** Level in the sub-audio band well below the fundamental (dBFS), null until enough capture. */
  subAudioDbfs: number | null;
}

export function createHarmonicAnalysis(): HarmonicAnalysis {
  return {
    mode: 'windowed',
    fundamental: { frequencyHz: 0, levelDbfs: FLOOR_DB, phaseDeg: 0 },
    measuredFundamentalHz: 0,
    harmonics: [],
    harmonicsAboveNyquist: [],
    thdPercent: 0,
    thdDb: FLOOR_DB,
    thdnPercent: 0,
    thdnDb: FLOOR_DB,
    sinadDb: 0,
    enob: 0,
    noiseDbfs: FLOOR_DB,
    noiseAWeightedDbfs: FLOOR_DB,
    hum: null,
    humSearch: null,
    bandHz: { lowHz: 0, highHz: 0 },
    mainsCoincidentOrders: [],
    flags: [],
  };
}
