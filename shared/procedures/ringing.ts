// The `ringing` step: a square wave at the step's frequency drives the unit, the technician captures
// its output on an oscilloscope and attaches the scope's CSV export, and the record is judged here:
// read (scope-csv.ts), analysed (ringing.ts in shared/scope), checked to be a record of this step's
// square wave, and its figures judged against the step's limits. Main calls judgeScopeRecord on the
// file it read itself; nothing the page computed is judged.
//
// An audio interface cannot see ringing at 100 kHz and above (its band ends below half its sample
// rate), which is why the record comes from an oscilloscope.
//
// Only types come from procedure-file.ts: the page uses this module and must not pull zod in.

import { median } from '../dsp/median.ts';
import { SQUARE_MAX_LEVEL_DBFS } from '../dsp/square-wave.ts';
import type { StimulusSetting } from '../dsp/sine-source.ts';
import { analyzeRinging, RINGING_FLAG_TEXT, RingingError, type EdgeRinging, type RingingAnalysis, type RingingFlag } from '../scope/ringing.ts';
import { readScopeCsv, ScopeCsvError } from '../scope/scope-csv.ts';
import { measurement, playedLevel, verdictOf, type Measurement, type StationLevels } from './check-steps.ts';
import type { Limit, RingingStep } from './procedure-file.ts';
import { hzText, quantityLabel } from './step-text.ts';

/**
 * How far the square wave's frequency in the record (from its edges' spacing) may lie from the
 * step's, percent. A generator's dial or a scope's time base is off by well under 1 % (common
 * practice); a record of another setting (10 kHz for 20 kHz) is off by tens of percent.
 */
export const RECORD_FREQUENCY_TOLERANCE_PERCENT = 2;

/** The largest scope export read: a few periods of a square wave at a few GS/s are well under this. */
export const SCOPE_FILE_MAX_BYTES = 32 * 1024 * 1024;

/** Points kept of the plotted edge: enough to draw a few cycles of ringing smoothly. */
export const EDGE_PLOT_MAX_POINTS = 600;

/**
 * The longest texts a stored record keeps, in UTF-16 units (the contract's bounds): a file name as
 * long as most file systems allow, a column header, a unit. A scope file may carry anything in its
 * header; longer texts are cut where the summary is made.
 */
export const SCOPE_TEXT_MAX = { fileName: 260, channelName: 200, unit: 40 } as const;

/**
 * The slowest edge a record may show, as the bandwidth 0.35/t_r of its 10–90 % rise time t_r (the
 * usual rule of thumb relating rise time and bandwidth, common practice; exact for one pole, where
 * t_r = 2.2·τ = 0.35/f_3dB). An edge excites little above its bandwidth, so a unit resonating far
 * above it hardly rings, and the record shows the edge's own overshoot instead: an audio
 * interface's band-limited square (no harmonic above half its sample rate) would pass a badly
 * ringing unit on its overshoot. The floor, 100 kHz, is where an audio interface cannot see
 * (a transformer stage's leakage resonance typically lies above it, common practice); with a
 * ringing-frequency low limit the edge must reach twice that limit, where a first-order edge's
 * spectrum is down only 1 dB (1/√(1 + 0.5²)), so ringing at the limit is excited nearly in full.
 */
export const MIN_EDGE_BANDWIDTH_HZ = 100_000;
export const RISE_TIME_BANDWIDTH_PRODUCT = 0.35;

/** The bandwidth the record's slowest edge must reach for this step: see MIN_EDGE_BANDWIDTH_HZ. */
export function requiredEdgeBandwidthHz(step: Pick<RingingStep, 'limits'>): number {
  const low = step.limits.ringFrequencyHz?.low;
  return Math.max(MIN_EDGE_BANDWIDTH_HZ, low !== undefined ? 2 * low : 0);
}

/** The longest 10–90 % rise time the record's edges may have for this step. */
export const maxRiseTimeS = (step: Pick<RingingStep, 'limits'>) => RISE_TIME_BANDWIDTH_PRODUCT / requiredEdgeBandwidthHz(step);

/**
 * Flags after which the record's figures cannot be trusted at all: the record is refused with the
 * flag's text, and the technician captures again. 'noisy' refuses only when the settling time is
 * judged (it is the only figure the noise withholds).
 */
const REFUSING_FLAGS: readonly RingingFlag[] = ['clipped-record', 'too-few-edges', 'irregular-edges', 'undersampled', 'not-decaying'];

export interface EdgePlot {
  polarity: 'rising' | 'falling';
  /** Seconds from the edge's 50 % instant. */
  timeS: number[];
  /** The record's values (volts, or the channel's unit). */
  values: number[];
  unit: string;
  finalLevelV: number;
  stepV: number;
  /** The fitted envelope ±amplitudePercent·e^{−decayPerS·t} of the step about the final level; null without ringing. */
  envelope: { amplitudePercent: number; decayPerS: number } | null;
  /** Where the fit begins, seconds from the 50 % instant: the first peak (before it the edge is still rising). */
  envelopeFromS: number | null;
}

/** What is stored with a ringing step's result besides its measurements: where the figures came from. */
export interface ScopeRecordSummary {
  fileName: string;
  channel: number;
  channelName: string;
  edges: number;
  /** The square wave's frequency in the record, from its edges. */
  squareHz: number;
  sampleIntervalS: number;
  flags: RingingFlag[];
  plot: EdgePlot;
}

export type RingingOutcome =
  | { ok: true; verdict: 'pass' | 'fail'; reasons: string[]; measurements: Measurement[]; record: ScopeRecordSummary }
  | { ok: false; refusal: string };

/** The square wave the step plays, or why it cannot be played on this station. */
export function ringingStimulus(step: RingingStep, levels: StationLevels | null): { ok: true; stimulus: StimulusSetting } | { ok: false; refusal: string } {
  const played = playedLevel(step.id, step.level, levels, SQUARE_MAX_LEVEL_DBFS);
  if (!played.ok) return played;
  return { ok: true, stimulus: { on: true, frequencyHz: step.squareHz, levelDbfs: played.levelDbfs, waveform: 'square' } };
}

/** The square wave's frequency from the spacing of successive edges (half a period each). */
export function squareHzOfEdges(edges: readonly Pick<EdgeRinging, 'timeS'>[]): number | null {
  const spacing: number[] = [];
  for (let k = 1; k < edges.length; k++) spacing.push(edges[k].timeS - edges[k - 1].timeS);
  // An edge the analysis dropped doubles one spacing; the median is unmoved by a few of those.
  return spacing.length > 0 ? 1 / (2 * median(spacing)) : null;
}

/** The deviation envelope at t seconds after the edge, as a value in the record's unit, above and below the final level. */
export function envelopeAt(plot: Pick<EdgePlot, 'finalLevelV' | 'stepV' | 'envelope'>, t: number): { upper: number; lower: number } | null {
  if (!plot.envelope) return null;
  const swing = (Math.abs(plot.stepV) * plot.envelope.amplitudePercent * Math.exp(-plot.envelope.decayPerS * t)) / 100;
  return { upper: plot.finalLevelV + swing, lower: plot.finalLevelV - swing };
}

const NO_RINGING_NOTE = 'no ringing above the noise in the record, so this could not be measured; an unmeasured limit is not a met one';

/** Cut to `max` UTF-16 units, an ellipsis marking the cut. */
function cut(text: string, max: number): string {
  return text.length <= max ? text : `${text.slice(0, max - 1)}…`;
}

const kHzText = (hz: number) => `${(hz / 1000).toPrecision(3)} kHz`;
export const usText = (s: number) => `${(s * 1e6).toPrecision(3)} µs`;

/** Why the record's edges are too slow for this step, or null when they are fast enough. */
function edgeTooSlow(step: RingingStep, analysis: RingingAnalysis, fileName: string): string | null {
  const required = requiredEdgeBandwidthHz(step);
  const fastEnough = maxRiseTimeS(step);
  const remedy = `Drive the unit from a function generator with a fast edge (rise time under ${usText(fastEnough)}) at the step's frequency and capture again; the station's own square wave is too slow at usual sample rates. If the generator's edge is already that fast, the unit's own output is this slow, and ringing above ${kHzText(required)} cannot be judged from it.`;
  if (analysis.riseTimeS === null) return `${fileName}: no edge's rise time could be measured (the record begins inside every edge), so whether the edge excites ringing is unknown. Capture from a little before an edge. ${remedy}`;
  if (analysis.riseTimeS <= fastEnough) return null;
  const bandwidth = RISE_TIME_BANDWIDTH_PRODUCT / analysis.riseTimeS;
  return `${fileName}: the slowest edge in the record rises in ${usText(analysis.riseTimeS)} (10–90 %), about ${kHzText(bandwidth)} of bandwidth: the edge is too slow to excite ringing above ${kHzText(bandwidth)}, and this step needs ${kHzText(required)} at least. ${remedy}`;
}

const overshootText = (zeta: number) => `${(100 * Math.exp((-zeta * Math.PI) / Math.sqrt(1 - zeta * zeta))).toPrecision(2)} %`;

/**
 * The step judged from the scope file's text. Refused (nothing to store) when the file cannot be
 * read, the channel is missing, the record is not a square-wave response fit to judge, or it is a
 * record of another square wave.
 */
export function judgeScopeRecord(step: RingingStep, text: string, fullFileName: string): RingingOutcome {
  const fileName = cut(fullFileName, SCOPE_TEXT_MAX.fileName);
  let record;
  try {
    record = readScopeCsv(text);
  } catch (error) {
    if (error instanceof ScopeCsvError) return { ok: false, refusal: `${fileName} cannot be read: ${error.message}. Export the record again as CSV and attach it.` };
    throw error;
  }
  const found = record.channels[step.channel];
  const channel = found && { ...found, name: cut(found.name, SCOPE_TEXT_MAX.channelName), unit: cut(found.unit, SCOPE_TEXT_MAX.unit) };
  if (!channel) {
    const names = record.channels.map((c) => `“${cut(c.name, SCOPE_TEXT_MAX.channelName)}”`).join(', ');
    return {
      ok: false,
      refusal: `${fileName} has ${record.channels.length} voltage column${record.channels.length === 1 ? '' : 's'} (${names}), and step “${step.id}” reads column ${step.channel} (counted from 0): export the channel on the unit's output.`,
    };
  }
  let analysis: RingingAnalysis;
  try {
    analysis = analyzeRinging(channel.values, record.sampleIntervalS);
  } catch (error) {
    if (error instanceof RingingError) return { ok: false, refusal: `${fileName}, column ${step.channel} (“${channel.name}”): ${error.message}.` };
    throw error;
  }
  const refusing = analysis.flags.filter((flag) => REFUSING_FLAGS.includes(flag) || (flag === 'noisy' && step.limits.settlingTimeS !== undefined));
  if (refusing.length > 0) {
    return { ok: false, refusal: `${fileName}: the record cannot be judged: ${refusing.map((flag) => RINGING_FLAG_TEXT[flag]).join('; ')}.` };
  }
  const slow = edgeTooSlow(step, analysis, fileName);
  if (slow) return { ok: false, refusal: slow };
  const squareHz = squareHzOfEdges(analysis.edges);
  const offPercent = squareHz === null ? Infinity : (100 * Math.abs(squareHz - step.squareHz)) / step.squareHz;
  if (squareHz === null || !(offPercent <= RECORD_FREQUENCY_TOLERANCE_PERCENT)) {
    return {
      ok: false,
      refusal: `${fileName} records a square wave of ${squareHz === null ? 'unknown frequency' : hzText(Math.round(squareHz))}, not the step's ${hzText(step.squareHz)} (its edges are not half a period of it apart): capture the unit's output while the step's square wave plays.`,
    };
  }

  const limits = step.limits;
  const ringing = analysis.ringFrequencyHz !== null;
  const measured: { m: Measurement; label: string }[] = [];
  const add = (quantity: keyof RingingStep['limits'], value: number | null, limit: Limit | undefined, note: string | null) => {
    if (limit) measured.push({ m: measurement(quantity, value, limit, note), label: quantityLabel(quantity) });
  };
  add('ringFrequencyHz', analysis.ringFrequencyHz, limits.ringFrequencyHz, ringing ? 'median over the edges that ring' : NO_RINGING_NOTE);
  if (ringing || analysis.dampingRatioAtLeast === null || !limits.dampingRatio) {
    add('dampingRatio', analysis.dampingRatio, limits.dampingRatio, ringing ? 'from the logarithmic decrement, median over the edges that ring' : NO_RINGING_NOTE);
  } else {
    // Without a second peak ζ is known only from below (shared/scope/ringing.ts): enough to meet a
    // low limit, never a high one, as a lower bound of the maximum level is judged.
    const atLeast = analysis.dampingRatioAtLeast;
    const surest = analysis.edges.find((edge) => edge.dampingRatioAtLeast === atLeast);
    const note =
      surest && surest.peaks.length === 1
        ? 'a lower bound, from the overshoot M alone (one peak above the noise, no second): ζ = −ln M/√(π² + ln² M); the noise may hide later peaks, so ζ is at least this'
        : `a lower bound: the record shows no overshoot above the noise, so any overshoot M is under ${overshootText(atLeast)} of the step, and ζ is at least −ln M/√(π² + ln² M) at that M`;
    if (limits.dampingRatio.high !== undefined) {
      add('dampingRatio', null, limits.dampingRatio, `${note} (${atLeast.toFixed(2)}), which cannot show ζ is under a high limit; an unmeasured limit is not a met one`);
    } else {
      measured.push({ m: measurement('dampingRatio', atLeast, limits.dampingRatio, note), label: `${quantityLabel('dampingRatio')} (lower bound)` });
    }
  }
  add('overshootPercent', analysis.overshootPercent, limits.overshootPercent, 'first peak beyond the final level, percent of the step, median over the edges');
  add(
    'settlingTimeS',
    analysis.settlingTimeS,
    limits.settlingTimeS,
    analysis.settlingTimeS === null ? `not settled within ±${analysis.settlingBandPercent} % before the next edge` : `to ±${analysis.settlingBandPercent} % of the step from the edge's 50 % point, median over the edges`,
  );
  const { verdict, reasons } = verdictOf(measured);
  return {
    ok: true,
    verdict,
    reasons,
    measurements: measured.map(({ m }) => m),
    record: {
      fileName,
      channel: step.channel,
      channelName: channel.name,
      edges: analysis.edges.length,
      squareHz,
      sampleIntervalS: record.sampleIntervalS,
      flags: analysis.flags,
      plot: edgePlot(channel.values, channel.unit, analysis, squareHz),
    },
  };
}

/**
 * A compact copy of one edge for the plot: a ringing edge (rising first) from a tenth of a half
 * period before its 50 % instant to the end of that half period, thinned to EDGE_PLOT_MAX_POINTS.
 */
function edgePlot(values: ArrayLike<number>, unit: string, analysis: RingingAnalysis, squareHz: number): EdgePlot {
  const { edges, sampleIntervalS: dt } = analysis;
  const ringing = edges.filter((edge) => edge.envelope !== null);
  const edge = ringing.find((e) => e.polarity === 'rising') ?? ringing[0] ?? edges.find((e) => e.polarity === 'rising') ?? edges[0];
  const half = 1 / (2 * squareHz);
  const from = Math.max(0, Math.floor((edge.timeS - 0.1 * half) / dt));
  const to = Math.min(values.length, Math.ceil((edge.timeS + 0.9 * half) / dt));
  const stride = Math.max(1, Math.ceil((to - from) / EDGE_PLOT_MAX_POINTS));
  const timeS: number[] = [];
  const kept: number[] = [];
  for (let i = from; i < to; i += stride) {
    timeS.push(i * dt - edge.timeS);
    kept.push(values[i]);
  }
  const envelopeFromS = edge.envelope && edge.peaks.length > 0 ? edge.peaks[0].timeS - edge.timeS : null;
  return { polarity: edge.polarity, timeS, values: kept, unit, finalLevelV: edge.finalLevelV, stepV: edge.stepV, envelope: edge.envelope, envelopeFromS };
}
