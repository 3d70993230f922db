import { useCallback, useEffect, useRef } from 'react';
import type { Reading } from '../../shared/measurement/reading.ts';
import type { LiveSeries } from '../../shared/trim/trim-assistant.ts';

// Live readings kept since the trimmer last moved (about a minute at six readings a second).
const LIVE_SERIES_LENGTH = 360;
// What goes with a recorded point: the last ten seconds or so.
const SENT_WITH_POINT = 60;

/**
 * The live readings since the trimmer last moved: amplitude wander and sub-audio growth show in
 * these. A move starts the series again, and the reading after it is not yet of the new position.
 */
export function useLiveSeries(reading: Reading | null) {
  const live = useRef<LiveSeries>({ levelsDbfs: [], lfDbfs: [] });
  const lastSequence = useRef(0);
  // The meter restarts its clean stretch at a move; a reading already on its way when the move
  // was sent may still come in, so the first one after the move does not count either.
  const sequenceAtMove = useRef(0);

  useEffect(() => {
    if (!reading) return;
    // A new meter (capture restarted, stimulus changed) starts its sequence again: so does the series.
    if (reading.sequence < lastSequence.current) {
      live.current = { levelsDbfs: [], lfDbfs: [] };
      sequenceAtMove.current = 0;
    }
    // Settle updates repeat the last measured numbers under the same sequence: not a new reading.
    if (reading.sequence === lastSequence.current) return;
    lastSequence.current = reading.sequence;
    if (reading.flags.includes('no-signal')) return;
    const series = live.current;
    series.levelsDbfs.push(reading.fundamental.levelDbfs);
    if (reading.subAudioDbfs !== null) series.lfDbfs.push(reading.subAudioDbfs);
    if (series.levelsDbfs.length > LIVE_SERIES_LENGTH) series.levelsDbfs.shift();
    if (series.lfDbfs.length > LIVE_SERIES_LENGTH) series.lfDbfs.shift();
  }, [reading]);

  const moved = useCallback(() => {
    live.current = { levelsDbfs: [], lfDbfs: [] };
    sequenceAtMove.current = lastSequence.current;
  }, []);

  /** True while `reading` may still include the previous position. */
  const beforeMove = useCallback((r: Reading) => r.sequence <= sequenceAtMove.current + 1, []);

  const recent = useCallback(
    (): LiveSeries => ({ levelsDbfs: live.current.levelsDbfs.slice(-SENT_WITH_POINT), lfDbfs: live.current.lfDbfs.slice(-SENT_WITH_POINT) }),
    [],
  );

  return { moved, beforeMove, recent };
}
