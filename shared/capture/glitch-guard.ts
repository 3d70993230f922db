// Finds capture discontinuities (a dropped or inserted block) in the sample stream itself,
// for capture paths whose timestamps cannot reveal them. Two signs, both cheap per sample:
//  - a run of exact zeros while a signal is present (an inserted silent block);
//  - a jump in the residual of a sine predictor: the cascade of x[n] − 2cos(kω)·x[n−1] + x[n−2]
//    for the tone and its 2nd and 3rd harmonics, which leaves almost nothing of a steady tone (even
//    one rich in harmonics) but spikes where samples were lost.
// A reading must never be computed across either (one dropout turned a −100 dBc H3 into −82 dBc).

export interface GlitchGuardOptions {
  /** Exact-zero run that counts as an inserted block while a signal is present. */
  zeroRunSamples: number;
  /** Residual power jump over its running mean that counts as a discontinuity, dB. */
  residualJumpDb: number;
  /** Residual must also exceed this level relative to the signal RMS, dB. */
  residualFloorDbc: number;
  /** Signal RMS below this (dBFS of a sine) counts as no signal: nothing is flagged. */
  signalPresentDbfs: number;
  /** Time constant of the running means, s. */
  averagingS: number;
}

export const DEFAULT_GLITCH_GUARD_OPTIONS: GlitchGuardOptions = {
  zeroRunSamples: 64,
  residualJumpDb: 30,
  residualFloorDbc: -60,
  signalPresentDbfs: -70,
  averagingS: 0.05,
};

export class GlitchGuard {
  /** Discontinuities found so far. */
  count = 0;
  private readonly options: GlitchGuardOptions;
  private readonly alpha: number;
  private readonly jumpRatio: number;
  private readonly floorRatio: number;
  private readonly signalPresentPower: number;
  private readonly warmupSamples: number;
  /** 2cos(kω) for k = 1..3; a stage above Nyquist is left at 2 (a plain second difference). */
  private readonly predictors = new Float64Array([2, 2, 2]);
  private predictorHz = 0;
  /** Two previous inputs of each of the three stages. */
  private readonly history = new Float64Array(6);
  private residualMean = 0;
  private signalMean = 0;
  private zeroRun = 0;
  private warmupLeft: number;
  private cooldownLeft = 0;
  private readonly cooldownSamples: number;

  readonly sampleRateHz: number;

  constructor(sampleRateHz: number, options: Partial<GlitchGuardOptions> = {}) {
    this.sampleRateHz = sampleRateHz;
    this.options = { ...DEFAULT_GLITCH_GUARD_OPTIONS, ...options };
    this.alpha = 1 / (this.options.averagingS * sampleRateHz);
    this.jumpRatio = 10 ** (this.options.residualJumpDb / 10);
    this.floorRatio = 10 ** (this.options.residualFloorDbc / 10);
    // Mean square of a sine of peak A is A²/2.
    this.signalPresentPower = 0.5 * 10 ** (this.options.signalPresentDbfs / 10);
    this.warmupSamples = Math.ceil(2 * this.options.averagingS * sampleRateHz);
    this.warmupLeft = this.warmupSamples;
    this.cooldownSamples = Math.ceil(this.options.averagingS * sampleRateHz);
  }

  /** Tunes the predictor to the tone being measured; a large change restarts the averages. */
  setToneHz(frequencyHz: number): void {
    if (!(frequencyHz > 0) || frequencyHz >= this.sampleRateHz / 2) return;
    if (Math.abs(frequencyHz - this.predictorHz) <= 0.01 * frequencyHz) return;
    this.predictorHz = frequencyHz;
    for (let k = 1; k <= 3; k++) {
      const omega = (2 * Math.PI * k * frequencyHz) / this.sampleRateHz;
      this.predictors[k - 1] = omega < Math.PI ? 2 * Math.cos(omega) : 2;
    }
    this.restart();
  }

  /**
   * Restarts after a known, intended change (stimulus level or frequency, a timestamp gap already
   * counted): nothing is flagged while the averages settle.
   */
  restart(): void {
    this.warmupLeft = this.warmupSamples;
    this.zeroRun = 0;
    this.residualMean = 0;
  }

  /**
   * Scans block[0..length). Returns the index just after the last discontinuity found in
   * the block (samples before it must not be analysed together with samples after it), or −1.
   */
  scan(block: ArrayLike<number>, length: number): number {
    const { zeroRunSamples } = this.options;
    let lastBreak = -1;
    const h = this.history;
    const [c1, c2, c3] = this.predictors;
    for (let i = 0; i < length; i++) {
      const x = block[i];
      const e1 = x - c1 * h[0] + h[1];
      const e2 = e1 - c2 * h[2] + h[3];
      const residual = e2 - c3 * h[4] + h[5];
      h[1] = h[0];
      h[0] = x;
      h[3] = h[2];
      h[2] = e1;
      h[5] = h[4];
      h[4] = e2;
      const residualPower = residual * residual;
      let broken = false;

      if (this.warmupLeft > 0) {
        this.warmupLeft--;
      } else if (this.signalMean > this.signalPresentPower) {
        if (x === 0) {
          this.zeroRun++;
          broken = this.zeroRun >= zeroRunSamples;
        } else {
          broken = this.zeroRun >= zeroRunSamples; // first sample after an inserted silent block
          this.zeroRun = 0;
          broken ||= residualPower > this.jumpRatio * this.residualMean && residualPower > this.floorRatio * this.signalMean;
        }
      }

      if (broken) {
        lastBreak = i + 1;
        // One dropout shows as several signs (zeros, then residual spikes at both edges): count it once.
        if (this.cooldownLeft === 0) this.count++;
        this.cooldownLeft = this.cooldownSamples;
      } else {
        if (this.cooldownLeft > 0) this.cooldownLeft--;
        // Spikes stay out of the means so a second dropout soon after is still seen.
        this.residualMean += this.alpha * (residualPower - this.residualMean);
        if (this.zeroRun === 0) this.signalMean += this.alpha * (x * x - this.signalMean);
      }
    }
    return lastBreak;
  }
}
