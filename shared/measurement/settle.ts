// A reading is settled when the last few readings agree: the trimmer has stopped moving and the
// unit has stopped drifting. Progress tells the technician how close that is. The sub-audio level
// is not part of it: its window is seconds long and keeps moving long after the harmonics have
// settled (a thump, a decaying oscillation), so it is watched for warnings, not waited for.

export interface SettleOptions {
  /** Readings whose fundamental level and THD must agree. */
  readingsToAgree: number;
  /** Largest spread of the fundamental level across them, dB. */
  levelToleranceDb: number;
  /** Largest spread of THD across them, dB. */
  thdToleranceDb: number;
}

export const DEFAULT_SETTLE_OPTIONS: SettleOptions = {
  readingsToAgree: 3,
  levelToleranceDb: 0.05,
  thdToleranceDb: 0.5,
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
  readonly options: SettleOptions;
  private readonly levels: Float64Array;
  private readonly thds: Float64Array;
  private filled = 0;
  private next = 0;
  private steady = 0;

  constructor(options: Partial<SettleOptions> = {}) {
    this.options = { ...DEFAULT_SETTLE_OPTIONS, ...options };
    this.levels = new Float64Array(this.options.readingsToAgree);
    this.thds = new Float64Array(this.options.readingsToAgree);
  }

  reset(): void {
    this.filled = 0;
    this.next = 0;
    this.steady = 0;
  }

  /** Readings still needed before the reading can be settled, if the coming ones agree. */
  get readingsNeeded(): number {
    return this.levels.length - this.steady;
  }

  /** Adds a reading; returns progress 0..1 (1 = settled). */
  add(levelDbfs: number, thdDb: number): number {
    const size = this.levels.length;
    const newest = this.next;
    this.levels[newest] = levelDbfs;
    this.thds[newest] = thdDb;
    this.next = (newest + 1) % size;
    this.filled = Math.min(size, this.filled + 1);
    this.steady = Math.min(
      agreeing(this.levels, newest, this.filled, this.options.levelToleranceDb),
      agreeing(this.thds, newest, this.filled, this.options.thdToleranceDb),
    );
    return this.steady / size;
  }
}
