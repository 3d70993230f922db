// A reading is settled when the last few readings agree: the trimmer has stopped moving and
// the unit has stopped drifting. Progress tells the technician how close that is.

export interface SettleOptions {
  /** Readings that must agree. */
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

export class SettleTracker {
  private readonly options: SettleOptions;
  private readonly levels: Float64Array;
  private readonly thds: Float64Array;
  private filled = 0;
  private next = 0;

  constructor(options: Partial<SettleOptions> = {}) {
    this.options = { ...DEFAULT_SETTLE_OPTIONS, ...options };
    this.levels = new Float64Array(this.options.readingsToAgree);
    this.thds = new Float64Array(this.options.readingsToAgree);
  }

  reset(): void {
    this.filled = 0;
    this.next = 0;
  }

  /** Adds a reading; returns progress 0..1 (1 = settled). */
  add(levelDbfs: number, thdDb: number): number {
    const size = this.levels.length;
    this.levels[this.next] = levelDbfs;
    this.thds[this.next] = thdDb;
    this.next = (this.next + 1) % size;
    this.filled = Math.min(size, this.filled + 1);
    // Count how many of the newest readings agree with the newest one, walking back.
    let agreeing = 1;
    let levelMin = levelDbfs;
    let levelMax = levelDbfs;
    let thdMin = thdDb;
    let thdMax = thdDb;
    for (let back = 1; back < this.filled; back++) {
      const slot = (this.next - 1 - back + size) % size;
      levelMin = Math.min(levelMin, this.levels[slot]);
      levelMax = Math.max(levelMax, this.levels[slot]);
      thdMin = Math.min(thdMin, this.thds[slot]);
      thdMax = Math.max(thdMax, this.thds[slot]);
      if (levelMax - levelMin > this.options.levelToleranceDb || thdMax - thdMin > this.options.thdToleranceDb) break;
      agreeing++;
    }
    return agreeing / size;
  }
}
