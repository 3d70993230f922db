// Sub-audio activity: the level in a band well below the fundamental (a trimmer turned past the
// null shows up here first, as wander and slow oscillation). Measured cheaply on a decimated
// stream: nine halving stages, each a [1 3 3 1]/8 low-pass whose triple zero at the stage's
// Nyquist keeps images out of the low band, then the shared frame analysis at the low rate
// with the fundamental's lobe taken out.

import { FrameAnalyzer } from './frame-analyzer.ts';
import { createHarmonicAnalysis, type HarmonicAnalysis } from './reading.ts';

const STAGES = 9; // ÷512: 48 kHz → 93.75 Hz, 44.1 kHz → 86.1 Hz
const FRAME = 512; // about 5.5 s at the decimated rate
export const SUB_AUDIO_LOW_HZ = 1.5;

export class SubAudioMeter {
  readonly decimatedRateHz: number;
  private readonly history: Float64Array; // three previous inputs per stage
  private readonly phase: Uint8Array;
  private readonly ring = new Float64Array(FRAME);
  private readonly frame = new Float64Array(FRAME);
  private written = 0;
  private readonly analyzer: FrameAnalyzer;
  private readonly result: HarmonicAnalysis = createHarmonicAnalysis();
  private readonly highHz: number;
  /** Where what is left of the fundamental after the low-pass stages lands in the decimated stream. */
  private readonly fundamentalResidueHz: number;

  /** `fundamentalHz`: the tone being measured; the band runs from 1.5 Hz to half of it. */
  constructor(sampleRateHz: number, fundamentalHz: number) {
    this.decimatedRateHz = sampleRateHz / 2 ** STAGES;
    this.highHz = Math.min(fundamentalHz / 2, this.decimatedRateHz / 4);
    // A residue folded down into (or next to) the band is far below anything watched for there (the
    // stages attenuate it by well over 100 dB): then the fit is pointed at an empty stretch above the band.
    const residueHz = aliasHz(fundamentalHz, this.decimatedRateHz);
    this.fundamentalResidueHz = residueHz > 1.5 * this.highHz ? residueHz : 0.45 * this.decimatedRateHz;
    this.history = new Float64Array(STAGES * 3);
    this.phase = new Uint8Array(STAGES);
    this.analyzer = new FrameAnalyzer(FRAME, this.decimatedRateHz, {
      harmonicCount: 2,
      bandLowHz: SUB_AUDIO_LOW_HZ,
      bandHighHz: this.highHz,
      noSignalDbfs: -400,
    });
  }

  push(block: ArrayLike<number>, length: number): void {
    for (let i = 0; i < length; i++) this.feed(0, block[i]);
  }

  /** Level in the sub-audio band, dBFS; null until one decimated frame has been captured. */
  levelDbfs(): number | null {
    if (this.written < FRAME || this.highHz <= SUB_AUDIO_LOW_HZ) return null;
    const start = this.written % FRAME;
    for (let i = 0; i < FRAME; i++) this.frame[i] = this.ring[(start + i) % FRAME];
    // Always a known frequency: left to search, the analysis would take the strongest sub-audio
    // component (the very oscillation watched for) as the fundamental and remove it.
    this.analyzer.analyze(this.frame, this.result, this.fundamentalResidueHz);
    return this.result.noiseDbfs;
  }

  private feed(stage: number, x: number): void {
    let s = stage;
    let value = x;
    while (s < STAGES) {
      const h = s * 3;
      const y = (value + 3 * this.history[h] + 3 * this.history[h + 1] + this.history[h + 2]) / 8;
      this.history[h + 2] = this.history[h + 1];
      this.history[h + 1] = this.history[h];
      this.history[h] = value;
      this.phase[s] ^= 1;
      if (this.phase[s] === 1) return; // keep every second output
      value = y;
      s++;
    }
    this.ring[this.written % FRAME] = value;
    this.written++;
  }
}

/** The frequency a tone at `frequencyHz` appears at when sampled at `rateHz` (folded into 0..rate/2). */
function aliasHz(frequencyHz: number, rateHz: number): number {
  const folded = frequencyHz % rateHz;
  return folded > rateHz / 2 ? rateHz - folded : folded;
}
