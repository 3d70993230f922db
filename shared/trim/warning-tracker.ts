// Live warnings that describe the present: fed every live reading with the position typed now and
// the recorded points, it says which warnings hold and when each was raised or cleared. Each has
// an enter and a leave threshold and needs several readings in a row to change, so a level that
// hovers near a threshold neither flickers nor goes stale.

import type { Reading } from '../measurement/reading.ts';
import type { Procedure } from '../procedures/procedure.ts';
import { fittedPointData, trimAssistantOptions, type AssessedPoint } from './assessment.ts';
import {
  adviseTrim,
  amplitudeWanderWarning,
  CLIPPING_WARNING,
  DEFAULT_TRIM_ASSISTANT_OPTIONS,
  gainRiseWarning,
  isOscillating,
  LIVE_READINGS_PER_SECOND,
  lfFalling,
  lfGrowing,
  lfInstabilityWarning,
  pastNullWarning,
  safeEndLf,
  type TrimAssistantOptions,
  type TrimPointData,
  type TrimWarning,
  type TrimWarningId,
} from './trim-assistant.ts';
import type { TrimFit } from './trim-model.ts';

export interface WarningChange {
  id: TrimWarningId;
  change: 'raised' | 'cleared';
  /** The position typed when it changed. */
  position: number;
  /** What was seen when it changed (for a clear, what was last seen while it held). */
  seen: string;
}

export interface WarningUpdate {
  /** Warnings that hold now, with today's numbers, in a fixed order. */
  active: TrimWarning[];
  /** Raised or cleared by this reading. */
  changes: WarningChange[];
}

export interface LiveWarningInput {
  /** The trimmer position typed now. */
  position: number;
  reading: Pick<Reading, 'fundamental' | 'thdDb' | 'subAudioDbfs' | 'flags'>;
  /** The run's recorded points, safe end first (inFit false ones are ignored). */
  points: readonly AssessedPoint[];
  /** The tone the generator is playing now, Hz. */
  stimulusHz: number;
  /**
   * False when only the position changed and the reading is the one already seen (the meter has no
   * new frame yet after a move): past-null follows the position at once, the rest waits for a reading.
   */
  newReading?: boolean;
}

export interface WarningHysteresis {
  /** Readings in a row over the enter threshold before a warning is raised. */
  enterReadings: number;
  /** Readings in a row under the leave threshold before it is cleared. */
  leaveReadings: number;
  /** The sub-audio level must fall this far below the rise that raised the warning to count as gone. */
  lfLeaveDb: number;
  /** The gain must fall this far below its threshold to count as back. */
  gainLeaveDb: number;
  /** The wander must fall to this fraction of its threshold. */
  wanderLeaveFraction: number;
}

export const DEFAULT_WARNING_HYSTERESIS: WarningHysteresis = {
  enterReadings: 4,
  leaveReadings: 3 * LIVE_READINGS_PER_SECOND,
  lfLeaveDb: 4,
  gainLeaveDb: 0.2,
  wanderLeaveFraction: 0.6,
};

/** What one reading says about a warning: over the enter threshold, under the leave one, or between. */
type Verdict = { state: 'on'; warning: TrimWarning } | { state: 'hold'; warning: TrimWarning | null } | { state: 'off' };

interface Track {
  active: boolean;
  onRun: number;
  offRun: number;
  /** The text while it holds, refreshed by every reading that has numbers for it. */
  warning: TrimWarning | null;
}

const ORDER: TrimWarningId[] = ['past-null', 'lf-instability', 'gain-rise', 'amplitude-wander', 'clipping'];
/** Warnings about a typed position change with it, not with noise: no readings-in-a-row needed. */
const IMMEDIATE: ReadonlySet<TrimWarningId> = new Set(['past-null', 'clipping']);
/** Live readings kept for growth and wander: a few seconds. */
const SERIES_LENGTH = 5 * LIVE_READINGS_PER_SECOND;

export class WarningTracker {
  private readonly settings: TrimAssistantOptions;
  private readonly harmonicOrder: number;
  private readonly hysteresis: WarningHysteresis;
  private readonly tracks = new Map<TrimWarningId, Track>();
  private readonly lfSeries: number[] = [];
  private readonly levelSeries: number[] = [];
  private lastPosition: number | null = null;
  private cachedPoints: readonly AssessedPoint[] | null = null;
  private cachedLength = -1;
  private cachedStimulusHz = Number.NaN;
  private data: TrimPointData[] = [];
  private fit: TrimFit | null = null;

  constructor(trim: Procedure['trim'], hysteresis: Partial<WarningHysteresis> = {}) {
    this.settings = { ...DEFAULT_TRIM_ASSISTANT_OPTIONS, ...trimAssistantOptions(trim) };
    this.hysteresis = { ...DEFAULT_WARNING_HYSTERESIS, ...hysteresis };
    this.harmonicOrder = trim.harmonicOrder;
    for (const id of ORDER) this.tracks.set(id, { active: false, onRun: 0, offRun: 0, warning: null });
  }

  /** Forget everything (a new unit, or a new run). */
  reset(): void {
    for (const track of this.tracks.values()) Object.assign(track, { active: false, onRun: 0, offRun: 0, warning: null });
    this.lfSeries.length = 0;
    this.levelSeries.length = 0;
    this.lastPosition = null;
    this.cachedPoints = null;
  }

  update(input: LiveWarningInput): WarningUpdate {
    this.refit(input);
    if (this.lastPosition !== input.position) {
      // Wander and growth are judged with the trimmer still: a move starts both series again.
      this.lfSeries.length = 0;
      this.levelSeries.length = 0;
      this.lastPosition = input.position;
    }
    const { reading } = input;
    const fresh = input.newReading !== false;
    const noSignal = reading.flags.includes('no-signal');
    if (!noSignal && fresh) {
      push(this.levelSeries, reading.fundamental.levelDbfs);
      if (reading.subAudioDbfs !== null) push(this.lfSeries, reading.subAudioDbfs);
    }
    const verdicts: Record<TrimWarningId, Verdict> = {
      'past-null': this.pastNull(input.position),
      'lf-instability': noSignal ? { state: 'hold', warning: null } : this.lfInstability(input),
      'gain-rise': noSignal ? { state: 'hold', warning: null } : this.gainRise(reading.fundamental.levelDbfs),
      'amplitude-wander': this.wander(),
      clipping: reading.flags.includes('clipping') ? { state: 'on', warning: CLIPPING_WARNING } : { state: 'off' },
    };
    const changes: WarningChange[] = [];
    const active: TrimWarning[] = [];
    for (const id of ORDER) {
      const track = this.tracks.get(id)!;
      if (!fresh && id !== 'past-null') {
        // Judged again only on a new reading: a repeated one must not count toward raising or clearing.
        if (track.active && track.warning) active.push(track.warning);
        continue;
      }
      const verdict = verdicts[id];
      if (verdict.state !== 'off' && verdict.warning) track.warning = verdict.warning;
      track.onRun = verdict.state === 'on' ? track.onRun + 1 : 0;
      track.offRun = verdict.state === 'off' ? track.offRun + 1 : 0;
      const enter = IMMEDIATE.has(id) ? 1 : this.hysteresis.enterReadings;
      const leave = id === 'past-null' ? 1 : this.hysteresis.leaveReadings;
      if (!track.active && track.onRun >= enter && track.warning) {
        track.active = true;
        changes.push({ id, change: 'raised', position: input.position, seen: track.warning.seen });
      } else if (track.active && track.offRun >= leave) {
        track.active = false;
        changes.push({ id, change: 'cleared', position: input.position, seen: track.warning?.seen ?? '' });
        track.warning = null;
      }
      if (track.active && track.warning) active.push(track.warning);
    }
    return { active, changes };
  }

  /** The fit is redone only when the recorded points change, not for every live reading. */
  private refit(input: LiveWarningInput): void {
    if (input.points === this.cachedPoints && input.points.length === this.cachedLength && input.stimulusHz === this.cachedStimulusHz) return;
    this.cachedPoints = input.points;
    this.cachedLength = input.points.length;
    this.cachedStimulusHz = input.stimulusHz;
    this.settings.stimulusHz = input.stimulusHz;
    this.data = fittedPointData(input.points, this.harmonicOrder);
    this.fit = this.data.length > 0 ? adviseTrim(this.data, this.settings).fit : null;
  }

  private pastNull(position: number): Verdict {
    const warning = this.fit ? pastNullWarning(position, this.fit) : null;
    return warning ? { state: 'on', warning } : { state: 'off' };
  }

  private lfInstability(input: LiveWarningInput): Verdict {
    const baseline = safeEndLf(this.data);
    const lf = input.reading.subAudioDbfs;
    if (baseline === null || lf === null) return { state: 'hold', warning: null };
    const signs = { lfDbfs: lf, thdDb: input.reading.thdDb, fundamentalHz: input.reading.fundamental.frequencyHz };
    const oscillating = isOscillating(baseline, signs, input.stimulusHz);
    const growing = lfGrowing(this.lfSeries, baseline);
    const rise = lf - baseline;
    const trend = growing ? 'rising' : lfFalling(this.lfSeries) ? 'falling' : 'steady';
    const warning = lfInstabilityWarning(oscillating, baseline, signs, trend, input.stimulusHz);
    if (oscillating || growing || rise > this.settings.lfRiseDb) return { state: 'on', warning };
    if (rise > this.settings.lfRiseDb - this.hysteresis.lfLeaveDb) return { state: 'hold', warning };
    return { state: 'off' };
  }

  private gainRise(levelDbfs: number): Verdict {
    const safeEnd = this.data.find((p) => p.gainDb !== null)?.gainDb ?? null;
    if (safeEnd === null) return { state: 'hold', warning: null };
    const rise = levelDbfs - safeEnd;
    const warning = gainRiseWarning(rise, this.settings.gainRiseDb);
    if (rise > this.settings.gainRiseDb) return { state: 'on', warning };
    if (rise > this.settings.gainRiseDb - this.hysteresis.gainLeaveDb) return { state: 'hold', warning };
    return { state: 'off' };
  }

  private wander(): Verdict {
    // The last two seconds or so: with the trimmer still and the reading settled, the level should hold.
    const still = this.levelSeries.slice(-2 * LIVE_READINGS_PER_SECOND);
    if (still.length < 5) return { state: 'hold', warning: null };
    const spread = Math.max(...still) - Math.min(...still);
    const warning = amplitudeWanderWarning(spread);
    if (spread > this.settings.wanderDb) return { state: 'on', warning };
    if (spread > this.hysteresis.wanderLeaveFraction * this.settings.wanderDb) return { state: 'hold', warning };
    return { state: 'off' };
  }
}

function push(series: number[], value: number): void {
  series.push(value);
  if (series.length > SERIES_LENGTH) series.shift();
}

// ---- warnings as the run records them ----------------------------------------------------------

/** A line of the run's warning log, as far as these functions read it. */
interface LoggedWarning {
  id: string;
  change: 'raised' | 'cleared';
  seen: string;
  source: 'assessment' | 'live';
}

/**
 * Warnings the live watch raised and has not reported cleared, from the run's log: what main judges
 * a trim by, and what the page shows as the outlook of completing it (one rule, one source).
 */
export function openLiveWarnings(log: readonly LoggedWarning[]): { id: string; seen: string }[] {
  const last = new Map<string, LoggedWarning>();
  for (const entry of log) if (entry.source === 'live') last.set(entry.id, entry);
  return [...last.values()].filter((e) => e.change === 'raised').map((e) => ({ id: e.id, seen: e.seen }));
}

/** Each warning the assessments raised, as first raised: the record of what the technician was told, and when. */
export function warningsRaised(assessments: readonly { afterSequence: number; assessment: { warnings: readonly TrimWarning[] } }[]): (TrimWarning & { afterSequence: number })[] {
  const raised: (TrimWarning & { afterSequence: number })[] = [];
  for (const { afterSequence, assessment } of assessments) {
    for (const warning of assessment.warnings) {
      if (!raised.some((w) => w.id === warning.id)) raised.push({ ...warning, afterSequence });
    }
  }
  return raised;
}
