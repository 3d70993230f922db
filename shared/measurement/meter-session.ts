// What the analysis worker does with its messages, kept here so that tests can drive any order of
// them: the live meter is rebuilt when its settings change, and every intended change (stimulus,
// trimmer, a rebuilt meter) starts a fresh clean stretch after a hold-off, whatever order the
// page's messages arrive in. A stimulus change is posted at once while the matching `configure`
// follows from a React effect: the rebuilt meter must not lose the change's hold-off.

import { LiveMeter, type LiveMeterConfig } from './live-meter.ts';

export type MeterSessionSettings = Pick<LiveMeterConfig, 'expectedFundamentalHz' | 'harmonicCount' | 'mainsHz' | 'stimulusLocked' | 'chainFloorThdDb'> &
  /** The band THD+N and noise are summed over; the meter's 20 Hz–20 kHz unless a step states its own. */
  Partial<Pick<LiveMeterConfig, 'bandLowHz' | 'bandHighHz'>>;

/**
 * A stimulus change reaches the input only after the interface's output and input latency (and
 * the capture worklet's buffering): readings restart this long after it, so no frame spans it.
 */
export const STIMULUS_HOLD_OFF_S = 0.25;
/**
 * After the technician reports a trimmer move (the trimmer has stopped by then), or after the demo
 * unit's trimmer has turned there: long enough for the capture path's latency, short against a frame.
 */
export const TRIMMER_HOLD_OFF_S = 0.1;

export class MeterSession {
  private settings: MeterSessionSettings;
  private readonly sampleGuard: boolean;
  private meter: LiveMeter | null = null;
  /** The meter being replaced, whose last reading the new one shows until it has its own. */
  private replaced: LiveMeter | null = null;
  /** Breaks counted by meters already replaced, so the count shown never drops back. */
  private earlierBreaks = 0;

  /** `sampleGuard`: look for lost blocks in the samples (off for the demo unit, see LiveMeterConfig). */
  constructor(settings: MeterSessionSettings, options: { sampleGuard: boolean }) {
    this.settings = { ...settings };
    this.sampleGuard = options.sampleGuard;
  }

  /** New settings: the meter is rebuilt (lazily, at the capture's rate) when they differ. */
  configure(settings: MeterSessionSettings): void {
    const next: MeterSessionSettings = {
      expectedFundamentalHz: settings.expectedFundamentalHz,
      harmonicCount: settings.harmonicCount,
      mainsHz: settings.mainsHz,
      stimulusLocked: settings.stimulusLocked,
      chainFloorThdDb: settings.chainFloorThdDb,
      // Left out when not given, so the meter's own default applies (a spread undefined would not).
      ...(settings.bandLowHz !== undefined && { bandLowHz: settings.bandLowHz }),
      ...(settings.bandHighHz !== undefined && { bandHighHz: settings.bandHighHz }),
    };
    if (JSON.stringify(next) === JSON.stringify(this.settings)) return;
    this.settings = next;
    if (this.meter) {
      this.earlierBreaks += this.meter.discontinuities;
      this.replaced = this.meter;
    }
    this.meter = null;
  }

  /** The stimulus changed level, frequency or on/off (an intended, uncounted break). */
  stimulusChanged(): void {
    this.meter?.markBreak(false, Math.round(STIMULUS_HOLD_OFF_S * this.meter.config.sampleRateHz));
  }

  /** The trimmer was moved; `moveSeconds` is how long it still takes to get there (the demo unit's), 0 for a hand already off it. */
  trimmerMoved(moveSeconds = 0): void {
    this.meter?.markBreak(false, Math.round((Math.max(0, moveSeconds) + TRIMMER_HOLD_OFF_S) * this.meter.config.sampleRateHz));
  }

  /** The capture path lost samples (a timestamp gap): a counted break. */
  captureGap(sampleRateHz: number): void {
    this.meterFor(sampleRateHz).markBreak(true);
  }

  /** Adds captured samples; returns the meter when its reading has changed (see LiveMeter.push). */
  push(samples: Float32Array, length: number, sampleRateHz: number): LiveMeter | null {
    const meter = this.meterFor(sampleRateHz);
    return meter.push(samples, length) ? meter : null;
  }

  /** Discontinuities since capture started, over every meter. */
  get discontinuities(): number {
    return this.earlierBreaks + (this.meter?.discontinuities ?? 0);
  }

  /** Counted breaks of meters already replaced (added to a reading's own count when shown). */
  get breaksBeforeThisMeter(): number {
    return this.earlierBreaks;
  }

  /** The current meter, built at `sampleRateHz` if there is none or the rate changed. */
  meterFor(sampleRateHz: number): LiveMeter {
    if (this.meter && this.meter.config.sampleRateHz === sampleRateHz) return this.meter;
    if (this.meter) {
      this.earlierBreaks += this.meter.discontinuities;
      this.replaced = this.meter;
    }
    const meter = new LiveMeter({ sampleRateHz, ...this.settings, sampleGuard: this.sampleGuard });
    // Settings change with the stimulus, often just after it: whatever order the messages came in,
    // a new meter starts with the stimulus hold-off, so its first frame never spans the change.
    meter.markBreak(false, Math.round(STIMULUS_HOLD_OFF_S * sampleRateHz));
    if (this.replaced) meter.carryOver(this.replaced.reading);
    this.replaced = null;
    this.meter = meter;
    return meter;
  }
}
