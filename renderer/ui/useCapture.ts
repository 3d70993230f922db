import { useCallback, useRef, useState, type RefObject } from 'react';
import type { Reading } from '../../shared/measurement/reading.ts';
import { BenchAudio } from '../audio/bench-audio.ts';
import { problemText } from '../problem-text.ts';
import type { GeneratorCommand, MeterSettings } from '../worker/messages.ts';
import type { AudioChoice } from './AudioSetup.tsx';

/**
 * The capture's lifecycle: one BenchAudio at a time (the owner of `audioRef`), its live reading and
 * spectrum, and what went wrong with it.
 */
export function useCapture({
  audioRef,
  choice,
  generatorNow,
  onStopped,
  onStarted,
}: {
  /** Written only here; the generator reads it to play through the running capture. */
  audioRef: RefObject<BenchAudio | null>;
  choice: AudioChoice;
  /** The generator as it is set when capture starts: the new capture plays it. */
  generatorNow(): GeneratorCommand;
  /** The capture stopped or was lost: nothing plays any more. */
  onStopped(): void;
  /** Capture started (device labels appear once permission is granted). */
  onStarted(): void;
}) {
  const [audio, setAudio] = useState<BenchAudio | null>(null);
  const [starting, setStarting] = useState(false);
  const [problem, setProblem] = useState<string | null>(null);
  const [discontinuities, setDiscontinuities] = useState(0);
  const [reading, setReading] = useState<Reading | null>(null);
  /** When the latest reading arrived (ms): a stream that stops delivering must not leave a "settled" reading behind. */
  const [readingAt, setReadingAt] = useState(0);
  const [spectrum, setSpectrum] = useState<{ hz: Float32Array; dbfs: Float32Array } | null>(null);
  /** The latest reading of a two-channel unit's channel 2, and when it arrived. */
  const [secondReading, setSecondReading] = useState<{ reading: Reading; at: number } | null>(null);
  const stoppedTo = useRef(onStopped);
  stoppedTo.current = onStopped;

  const clearLive = useCallback(() => {
    setReading(null);
    setSecondReading(null);
    setSpectrum(null);
    setDiscontinuities(0);
  }, []);

  const start = useCallback(async (meter: MeterSettings) => {
    if (starting || audioRef.current) return; // one capture at a time, even on a double click
    setProblem(null);
    clearLive();
    setStarting(true);
    try {
      let instance: BenchAudio | null = null;
      // Events from an instance that is no longer the current one are ignored.
      const current = () => instance !== null && audioRef.current === instance;
      instance = await BenchAudio.start(
        {
          inputDeviceId: choice.inputDeviceId || null,
          outputDeviceId: choice.outputDeviceId || null,
          sampleRateHz: choice.sampleRateHz,
          meter,
        },
        {
          onReading: (next, hz, dbfs) => {
            if (!current()) return;
            setReading(next);
            setReadingAt(Date.now());
            setSpectrum({ hz, dbfs });
          },
          onSecondReading: (next) => current() && setSecondReading({ reading: next, at: Date.now() }),
          onStatus: (status) => current() && setDiscontinuities(status.discontinuities),
          onProblem: (message) => {
            if (!current()) return;
            setProblem(message);
            stoppedTo.current();
            // Nothing may be recorded from a reading taken before the device went away.
            setReading(null);
            setSecondReading(null);
            audioRef.current = null;
            setAudio(null);
          },
        },
      );
      audioRef.current = instance;
      setAudio(instance);
      instance.setGenerator(generatorNow());
      onStarted();
    } catch (error) {
      setProblem(problemText(error, 'Capture could not start', 'Check the input and output choices, then press Start capture again.'));
    } finally {
      setStarting(false);
    }
  }, [starting, audioRef, clearLive, choice.inputDeviceId, choice.outputDeviceId, choice.sampleRateHz, generatorNow, onStarted]);

  const stop = useCallback(() => {
    audioRef.current?.stop();
    audioRef.current = null;
    setAudio(null);
    clearLive();
    stoppedTo.current();
  }, [audioRef, clearLive]);

  return { audio, starting, problem, setProblem, discontinuities, reading, readingAt, secondReading, spectrum, start, stop };
}
