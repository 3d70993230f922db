import { useCallback, useEffect, useRef, useState, type RefObject } from 'react';
import type { BenchAudio } from '../audio/bench-audio.ts';
import type { GeneratorCommand } from '../worker/messages.ts';

/**
 * The generator as the technician and the current step set it, played through the running capture.
 * Esc mutes it from anywhere, even while typing; G turns it on or off wherever G cannot be typed
 * (outside text fields, and in the numbers-only field `gField`).
 */
export function useGenerator(audioRef: RefObject<BenchAudio | null>, gField: RefObject<HTMLInputElement | null>, afterTurnedOn: () => void) {
  const [generator, setGenerator] = useState<GeneratorCommand>({ frequencyHz: 1000, levelDbfs: -20, on: false });
  // Until a step (or the technician) sets the stimulus, the fields show nothing rather than a made-up tone.
  const [generatorSet, setGeneratorSet] = useState(false);
  const generatorRef = useRef(generator);
  generatorRef.current = generator;
  const setRef = useRef(generatorSet);
  setRef.current = generatorSet;
  const turnedOn = useRef(afterTurnedOn);
  turnedOn.current = afterTurnedOn;

  const apply = useCallback(
    (command: GeneratorCommand) => {
      setGenerator(command);
      setGeneratorSet(true);
      generatorRef.current = command;
      audioRef.current?.setGenerator(command);
    },
    [audioRef],
  );

  const mute = useCallback(() => {
    setGenerator((current) => ({ ...current, on: false }));
    generatorRef.current = { ...generatorRef.current, on: false };
    audioRef.current?.mute();
  }, [audioRef]);

  /** The capture stopped: nothing plays, whatever the fields say. */
  const markOff = useCallback(() => setGenerator((current) => ({ ...current, on: false })), []);

  const now = useCallback(() => generatorRef.current, []);

  /** On/off from the generator panel, a step's button or the G key. */
  const toggle = useCallback(() => {
    if (generatorRef.current.on) return mute();
    if (!audioRef.current || !setRef.current) return;
    apply({ ...generatorRef.current, on: true });
    turnedOn.current();
  }, [apply, mute, audioRef]);

  useEffect(() => {
    const onKey = (event: KeyboardEvent) => {
      if (event.key === 'Escape') return mute();
      if ((event.key === 'g' || event.key === 'G') && !event.ctrlKey && !event.altKey && !event.metaKey) {
        const target = event.target as HTMLElement | null;
        const typing = target !== null && (target.isContentEditable || /^(INPUT|TEXTAREA|SELECT)$/.test(target.tagName));
        if (typing && target !== gField.current) return;
        event.preventDefault();
        toggle();
      }
    };
    window.addEventListener('keydown', onKey, { capture: true });
    return () => window.removeEventListener('keydown', onKey, { capture: true });
  }, [mute, toggle, gField]);

  return { generator, generatorSet, apply, mute, markOff, toggle, now };
}
