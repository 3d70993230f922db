import { useEffect, useMemo, useRef, useState } from 'react';
import type { Procedure } from '../../shared/procedures/procedure.ts';
import type { TrimPoint } from '../../shared/ipc/contract.ts';
import type { Reading } from '../../shared/measurement/reading.ts';
import type { TrimWarning } from '../../shared/trim/trim-assistant.ts';
import { WarningTracker, type WarningChange } from '../../shared/trim/warning-tracker.ts';

/**
 * The warnings that hold now, at the typed position, from every new live reading: raised and
 * cleared by the shared WarningTracker (with its hysteresis), each change handed on for the run's log.
 */
export function useLiveWarnings(
  trim: Procedure['trim'],
  trimPoints: readonly TrimPoint[],
  position: number,
  reading: Reading | null,
  stimulusHz: number,
  onChanges: (changes: WarningChange[]) => void,
): TrimWarning[] {
  const tracker = useRef<WarningTracker | null>(null);
  tracker.current ??= new WarningTracker(trim);
  // The tracker refits only when this array changes: the same array between recordings.
  const points = useMemo(() => trimPoints.map((p) => ({ position: p.position, reading: p.reading, inFit: p.inFit })), [trimPoints]);
  const [active, setActive] = useState<TrimWarning[]>([]);
  const lastSequence = useRef(-1);
  const lastPosition = useRef(Number.NaN);
  const changesTo = useRef(onChanges);
  changesTo.current = onChanges;

  useEffect(() => {
    if (!reading || points.length === 0 || !Number.isFinite(position)) return;
    // Settle updates repeat the last measured numbers (same sequence): they count only as a move.
    const newReading = reading.sequence !== lastSequence.current;
    if (!newReading && position === lastPosition.current) return;
    lastSequence.current = reading.sequence;
    lastPosition.current = position;
    const update = tracker.current!.update({ position, reading, points, stimulusHz, newReading });
    setActive((current) => (sameWarnings(current, update.active) ? current : update.active));
    const loggable = update.changes.filter((c) => c.position >= trim.positionMin && c.position <= trim.positionMax);
    if (loggable.length > 0) changesTo.current(loggable);
  }, [reading, points, position, stimulusHz, trim]);

  return active;
}

function sameWarnings(a: readonly TrimWarning[], b: readonly TrimWarning[]): boolean {
  return a.length === b.length && a.every((w, i) => w.id === b[i].id && w.seen === b[i].seen);
}
