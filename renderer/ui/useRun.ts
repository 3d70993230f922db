import { useCallback, useRef, useState } from 'react';
import type { AudioSetup } from '../../shared/calibration/station-calibration.ts';
import type { RunDetail, StimulusSettingRequest } from '../../shared/ipc/contract.ts';
import type { Reading } from '../../shared/measurement/reading.ts';
import type { LiveSeries } from '../../shared/trim/trim-assistant.ts';
import type { WarningChange } from '../../shared/trim/warning-tracker.ts';
import { ApiError, call } from '../api.ts';

/**
 * How a reading that has not settled is treated: Enter only ever records settled readings
 * ('refuse'); 'record-marked' comes only from the separate, confirmed "Record unsettled…" action.
 */
export type UnsettledChoice = 'refuse' | 'record-marked';

export interface OpenRunRequest {
  serial: string;
  procedureId: number;
  operator: string;
  retestReason?: string;
  lot?: string;
}

/**
 * The open run, as main last answered it: the one owner of run state in the page. Every record
 * call replaces it with main's answer; nothing here judges or re-derives what main holds.
 * A step call made while another is in flight is ignored (an impatient double Enter records once).
 */
export function useRun(setup: AudioSetup | null) {
  const [detail, setDetail] = useState<RunDetail | null>(null);
  // Sent with every reading: main checks it against the run's calibration.
  const setupRef = useRef(setup);
  setupRef.current = setup;
  const [pending, setPending] = useState(false);
  const inFlight = useRef(false);
  const detailRef = useRef(detail);
  detailRef.current = detail;

  /** Runs one call at a time; null when another is still in flight. */
  const once = useCallback(async <T,>(work: () => Promise<T>): Promise<T | null> => {
    if (inFlight.current) return null;
    inFlight.current = true;
    setPending(true);
    try {
      return await work();
    } finally {
      inFlight.current = false;
      setPending(false);
    }
  }, []);

  const runId = () => {
    const open = detailRef.current;
    if (!open) throw new ApiError('No unit is open. Open a unit first.');
    return open.run.id;
  };
  /** A late answer for a unit already closed is dropped. */
  const keep = (next: RunDetail) => setDetail((current) => (current && current.run.id === next.run.id ? next : current));

  const open = useCallback(async (request: OpenRunRequest, setup: AudioSetup | null) => {
    // Main refuses a procedure that requires a calibration unless it holds for this setup.
    const opened = await call('openRun', { ...request, setup });
    setDetail(opened);
    return opened;
  }, []);

  const recordPoint = useCallback(async (position: number, reading: Reading, live: LiveSeries, stimulus: StimulusSettingRequest, unsettled: UnsettledChoice) => {
    // Shown as recorded only after main has written it (and its assessment) to the database.
    const { detail: next } = await call('recordTrimPoint', { runId: runId(), position, reading, live, stimulus, unsettled, setup: setupRef.current });
    keep(next);
  }, []);

  /** The technician confirms an unsettled point: it joins the fit (main re-assesses and logs it). */
  const includePoint = useCallback(async (pointId: number) => {
    const { detail: next } = await call('includeUnsettledPoint', { runId: runId(), pointId });
    keep(next);
  }, []);

  /** Live warnings raised and cleared between points go into the run's log. */
  const logWarningChanges = useCallback(async (changes: WarningChange[]) => {
    const id = detailRef.current?.run.id;
    if (id === undefined || changes.length === 0) return;
    const { warningLog } = await call('logWarningChanges', { runId: id, changes });
    setDetail((d) => (d && d.run.id === id ? { ...d, warningLog } : d));
  }, []);

  const recordWarmCheck = useCallback(async (request: { coldTemperatureC: number; warmTemperatureC: number; reading: Reading }, stimulus: StimulusSettingRequest) => {
    const id = runId();
    const warmCheck = await call('recordWarmCheck', { runId: id, ...request, stimulus });
    setDetail((d) => (d && d.run.id === id ? { ...d, warmCheck } : d));
    return warmCheck;
  }, []);

  const acknowledgeNotice = useCallback((stepId: string) => once(async () => keep(await call('acknowledgeNotice', { runId: runId(), stepId }))), [once]);
  const completeTrim = useCallback((stepId: string) => once(async () => keep(await call('completeTrim', { runId: runId(), stepId }))), [once]);
  const recordCheckStep = useCallback(
    (stepId: string, stimulus: StimulusSettingRequest, readings: { channel: number; reading: Reading }[]) =>
      once(async () => keep(await call('recordCheckStep', { runId: runId(), stepId, stimulus, readings, setup: setupRef.current }))),
    [once],
  );

  /** A max-level step's whole sequence: main re-runs its rules on every reading and judges it. */
  const recordMaxLevel = useCallback(
    (stepId: string, points: { stimulus: StimulusSettingRequest; reading: Reading }[]) =>
      once(async () => keep(await call('recordMaxLevel', { runId: runId(), stepId, points, setup: setupRef.current }))),
    [once],
  );

  /** Main asks for the scope's file in its own dialog and judges it; resolves 'cancelled' when the technician cancels. */
  const attachScopeCapture = useCallback(
    (stepId: string) =>
      once(async () => {
        const { outcome, detail } = await call('attachScopeCapture', { runId: runId(), stepId });
        keep(detail);
        return outcome;
      }),
    [once],
  );

  /** A response step's capture: plain numbers, which cross any bridge to main. */
  const recordResponse = useCallback(
    (stepId: string, samples: Float32Array, sampleRateHz: number) =>
      once(async () => keep(await call('recordResponse', { runId: runId(), stepId, sampleRateHz, samples: Array.from(samples), setup: setupRef.current }))),
    [once],
  );

  /** Refused with the reasons when the run has not earned a PASS, unless it is finished as a FAIL. */
  const finish = useCallback(
    (asFailure: boolean) =>
      once(async () => {
        const finished = await call('finishRun', { runId: runId(), asFailure });
        setDetail(finished);
        return finished;
      }),
    [once],
  );

  const close = useCallback(() => setDetail(null), []);

  return { detail, pending, open, recordPoint, includePoint, logWarningChanges, recordWarmCheck, acknowledgeNotice, completeTrim, recordCheckStep, recordMaxLevel, recordResponse, attachScopeCapture, finish, close };
}
