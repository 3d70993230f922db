// Capture paths that stamp each block (WebCodecs AudioData from MediaStreamTrackProcessor)
// reveal a lost or inserted block as a jump in the timestamps. Tolerance: half a block, at
// least 2 ms, so clock jitter passes and a whole dropped 10 ms block never does.

const MIN_TOLERANCE_US = 2000;

export class TimestampContinuity {
  private expectedUs: number | null = null;

  /** True when the block does not follow on from the previous one (the first block never is). */
  isGap(timestampUs: number, frameCount: number, sampleRateHz: number): boolean {
    const durationUs = (frameCount * 1e6) / sampleRateHz;
    const gap = this.expectedUs !== null && Math.abs(timestampUs - this.expectedUs) > Math.max(MIN_TOLERANCE_US, durationUs / 2);
    this.expectedUs = timestampUs + durationUs;
    return gap;
  }

  reset(): void {
    this.expectedUs = null;
  }
}
