import { useCallback, useEffect, useRef, useState } from 'react';
import type { Reading } from '../../shared/measurement/reading.ts';
import type { StationLevels } from '../../shared/procedures/check-steps.ts';
import { maxLevelNext, type MaxLevelNext, type MaxLevelPlan, type MaxLevelPoint, type MaxLevelStep } from '../../shared/procedures/max-level.ts';
import type { GeneratorCommand } from '../worker/messages.ts';

export type SequencePhase = 'ready' | 'running' | 'ended' | 'stopped';

export interface SequenceState {
  phase: SequencePhase;
  /** Each level played so far with its reading, in order. */
  points: MaxLevelPoint[];
  /** The level playing now (0-based), while running. */
  index: number;
  /** How the sequence ended (the shared rules' answer to its last reading); null before. */
  end: MaxLevelNext | null;
  /** Why the sequence stopped without an end (Esc, the generator muted); null otherwise. */
  stoppedWhy: string | null;
  /** performance.now() at the start of each level, for the time left. */
  levelStartedAt: number[];
}

const READY: SequenceState = { phase: 'ready', points: [], index: 0, end: null, stoppedWhy: null, levelStartedAt: [] };

/**
 * Walks a max-level step's levels: each level played, a settled reading of it awaited (or a clipped
 * one, which ends the run at once), the shared rules asked what follows, then the next level or the
 * end with the generator muted. Esc, or the generator muted by any other way, stops it and nothing
 * is kept for recording. Nothing here judges: maxLevelNext does, as main will again.
 */
export function useMaxLevelSequence({
  step,
  plan,
  levels,
  reading,
  generator,
  apply,
  mute,
}: {
  step: MaxLevelStep;
  plan: MaxLevelPlan | null;
  levels: StationLevels | null;
  reading: Reading | null;
  generator: GeneratorCommand;
  apply(command: GeneratorCommand): void;
  mute(): void;
}) {
  const [state, setState] = useState<SequenceState>(READY);
  const stateRef = useRef(state);
  stateRef.current = state;
  // A reading is of the level playing only once the meter has restarted after the change (it then
  // posts unsettled readings) and analysed new frames (its sequence advances past the change's).
  const gate = useRef({ sequenceAtChange: -1, sawBreak: false });

  const play = useCallback(
    (levelDbfs: number, frequencyHz: number) => {
      gate.current = { sequenceAtChange: reading?.sequence ?? -1, sawBreak: false };
      apply({ frequencyHz, levelDbfs, on: true });
    },
    [apply, reading],
  );

  const start = useCallback(() => {
    if (!plan || stateRef.current.phase === 'running') return;
    setState({ ...READY, phase: 'running', levelStartedAt: [performance.now()] });
    play(plan.levelsDbfs[0] as number, generator.frequencyHz);
  }, [plan, play, generator.frequencyHz]);

  const stop = useCallback(
    (why: string) => {
      mute();
      if (stateRef.current.phase === 'running') setState((s) => ({ ...s, phase: 'stopped', stoppedWhy: why }));
    },
    [mute],
  );

  const reset = useCallback(() => setState(READY), []);

  // Leaving the step while it runs (another step opened, the unit closed) leaves nothing playing.
  const muteRef = useRef(mute);
  muteRef.current = mute;
  useEffect(
    () => () => {
      if (stateRef.current.phase === 'running') muteRef.current();
    },
    [],
  );

  // Esc stops at once (useGenerator mutes on it too, from anywhere).
  useEffect(() => {
    if (state.phase !== 'running') return;
    const onKey = (event: KeyboardEvent) => {
      if (event.key === 'Escape') stop('Stopped (Esc): the generator is muted and nothing was recorded. Press Enter to start again from the first level.');
    };
    window.addEventListener('keydown', onKey, { capture: true });
    return () => window.removeEventListener('keydown', onKey, { capture: true });
  }, [state.phase, stop]);

  useEffect(() => {
    if (state.phase !== 'running' || !plan || !levels) return;
    if (!generator.on) return stop('Stopped: the generator was muted. Nothing was recorded. Press Enter to start again from the first level.');
    if (!reading) return;
    const g = gate.current;
    if (!reading.settled) g.sawBreak = true;
    const fresh = reading.sequence > g.sequenceAtChange;
    const clipped = fresh && reading.flags.includes('clipping');
    if (!clipped && !(reading.settled && fresh && (g.sawBreak || reading.sequence >= g.sequenceAtChange + 3))) return;
    // This reading is taken: none after it counts for this level.
    g.sequenceAtChange = Number.POSITIVE_INFINITY;
    const points = [...state.points, { stimulus: { ...generator }, reading }];
    const next = maxLevelNext(step, plan, levels, points);
    if (next.next === 'go-on') {
      setState((s) => ({ ...s, points, index: s.index + 1, levelStartedAt: [...s.levelStartedAt, performance.now()] }));
      play(next.levelDbfs, generator.frequencyHz);
      return;
    }
    mute();
    setState((s) => ({ ...s, points, phase: 'ended', end: next }));
  }, [reading, generator, state.phase, state.points, plan, levels, step, play, mute, stop]);

  return { state, start, reset };
}

/** Seconds left if every level left takes as long as those done took on average (null before one is done). */
export function secondsLeft(state: SequenceState, levelCount: number, now: number): number | null {
  const done = state.points.length;
  if (done === 0) return null;
  const spent = (state.levelStartedAt[done] ?? now) - (state.levelStartedAt[0] as number);
  const perLevel = spent / done;
  const sinceThis = now - (state.levelStartedAt[done] ?? now);
  return Math.max(0, (perLevel * (levelCount - done) - sinceThis) / 1000);
}
