import { useCallback, useEffect, useRef, useState } from 'react';
import type { LogSweepSpec } from '../../shared/dsp/log-sweep.ts';
import { logSweepLayout } from '../../shared/dsp/log-sweep.ts';
import { RESPONSE_CAPTURE_MARGIN_S } from '../../shared/procedures/response.ts';
import type { BenchAudio } from '../audio/bench-audio.ts';
import { problemText } from '../problem-text.ts';

export type SweepState =
  | { phase: 'ready' }
  | { phase: 'playing'; fraction: number; secondsLeft: number }
  | { phase: 'analysing' }
  | { phase: 'stopped'; message: string };

/**
 * One sweep of a response step: played and captured through the running capture, then handed to
 * main (`send`), which analyses and judges it. The capture is the stimulus's length plus most of
 * RESPONSE_CAPTURE_MARGIN_S, for the round trip: main accepts no more than the whole margin.
 */
export function useResponseSweep(audio: BenchAudio | null, send: (samples: Float32Array, sampleRateHz: number) => Promise<unknown>, onSweeping: (playing: boolean) => void) {
  const [state, setState] = useState<SweepState>({ phase: 'ready' });
  const running = useRef(false);
  const sweeping = useRef(onSweeping);
  sweeping.current = onSweeping;

  // Leaving the step (or the panel) stops a sweep still playing.
  useEffect(
    () => () => {
      audio?.stopSweep();
      sweeping.current(false);
    },
    [audio],
  );

  const start = useCallback(
    async (spec: LogSweepSpec) => {
      if (!audio || running.current) return;
      running.current = true;
      const total = logSweepLayout(spec).totalLength + Math.floor(0.75 * RESPONSE_CAPTURE_MARGIN_S * spec.sampleRateHz);
      setState({ phase: 'playing', fraction: 0, secondsLeft: total / spec.sampleRateHz });
      sweeping.current(true);
      try {
        const samples = await audio.recordSweep(spec, total, (captured, frames) =>
          setState({ phase: 'playing', fraction: captured / frames, secondsLeft: (frames - captured) / spec.sampleRateHz }),
        ).finally(() => sweeping.current(false));
        setState({ phase: 'analysing' });
        await send(samples, spec.sampleRateHz);
        setState({ phase: 'ready' });
      } catch (error) {
        setState({ phase: 'stopped', message: problemText(error, 'The sweep was not recorded', 'Press Enter to run it again.') });
      } finally {
        running.current = false;
      }
    },
    [audio, send],
  );

  return { state, start };
}
