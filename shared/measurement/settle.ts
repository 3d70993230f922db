// A reading is settled when the last few readings agree: the trimmer has stopped moving and the
// unit has stopped drifting. Progress tells the technician how close that is. The sub-audio level
// is held to a longer run of readings: its window is seconds long, and the thump of a trimmer move
// or of the stimulus starting takes that long to pass through it.

export interface SettleOptions {
  /** Readings whose fundamental level and THD must agree. */
  readingsToAgree: number;
  /** Largest spread of the fundamental level across them, dB. */
  levelToleranceDb: number;
  /** Largest spread of THD across them, dB. */
  thdToleranceDb: number;
  /** Readings whose sub-audio level must agree (about two seconds of readings). */
  subAudioReadingsToAgree: number;
  /** Largest spread of the sub-audio level across those, dB. */
  subAudioToleranceDb: number;
}

export const DEFAULT_SETTLE_OPTIONS: SettleOptions = {
  readingsToAgree: 3,
  levelToleranceDb: 0.05,
  thdToleranceDb: 0.5,
  subAudioReadingsToAgree: 12,
  subAudioToleranceDb: 3,
};

/** How many of the newest values, walking back, stay within `tolerance` of each other (out of `filled`). */
function agreeing(values: Float64Array, newest: number, filled: number, tolerance: number): number {
  const size = values.length;
  let min = values[newest];
  let max = min;
  let count = 1;
  for (let back = 1; back < filled; back++) {
    const value = values[(newest - back + size) % size];
    min = Math.min(min, value);
    max = Math.max(max, value);
    if (max - min > tolerance) break;
    count++;
  }
  return count;
}

export class SettleTracker {
  private readonly options: SettleOptions;
  private readonly levels: Float64Array;
  private readonly thds: Float64Array;
  private readonly subAudio: Float64Array;
  private filled = 0;
  private next = 0;
  private subAudioFilled = 0;
  private subAudioNext = 0;

  constructor(options: Partial<SettleOptions> = {}) {
    this.options = { ...DEFAULT_SETTLE_OPTIONS, ...options };
    this.levels = new Float64Array(this.options.readingsToAgree);
    this.thds = new Float64Array(this.options.readingsToAgree);
    this.subAudio = new Float64Array(this.options.subAudioReadingsToAgree);
  }

  reset(): void {
    this.filled = 0;
    this.next = 0;
    this.subAudioFilled = 0;
    this.subAudioNext = 0;
  }

  /** Adds a reading; returns progress 0..1 (1 = settled). A null sub-audio level is not measured. */
  add(levelDbfs: number, thdDb: number, subAudioDbfs: number | null = null): number {
    const size = this.levels.length;
    const newest = this.next;
    this.levels[newest] = levelDbfs;
    this.thds[newest] = thdDb;
    this.next = (newest + 1) % size;
    this.filled = Math.min(size, this.filled + 1);
    const steady = Math.min(
      agreeing(this.levels, newest, this.filled, this.options.levelToleranceDb),
      agreeing(this.thds, newest, this.filled, this.options.thdToleranceDb),
    );
    let progress = steady / size;
    if (subAudioDbfs !== null) {
      const lfSize = this.subAudio.length;
      const lfNewest = this.subAudioNext;
      this.subAudio[lfNewest] = subAudioDbfs;
      this.subAudioNext = (lfNewest + 1) % lfSize;
      this.subAudioFilled = Math.min(lfSize, this.subAudioFilled + 1);
      progress = Math.min(progress, agreeing(this.subAudio, lfNewest, this.subAudioFilled, this.options.subAudioToleranceDb) / lfSize);
    }
    return progress;
  }
}
