import { useCallback, useEffect, useRef, useState } from 'react';
import type { StationCalibration } from '../../shared/ipc/contract.ts';
import type { AudioSetup as StationAudioSetup } from '../../shared/calibration/station-calibration.ts';
import { DEMO_INPUT, listDevices, type AudioDevices } from '../audio/bench-audio.ts';
import { problemText } from '../problem-text.ts';
import type { AudioChoice } from './AudioSetup.tsx';

/**
 * The interface's devices and the technician's choice of input, output, rate, channel, mains and
 * clocking: the station's saved defaults until the technician chooses otherwise.
 */
export function useAudioChoice(stationCalibration: StationCalibration | null, onProblem: (message: string) => void) {
  const [devices, setDevices] = useState<AudioDevices | null>(null);
  const [choice, setChoice] = useState<AudioChoice>({
    inputDeviceId: '',
    outputDeviceId: '',
    sampleRateHz: 48000,
    channel: 0,
    secondChannel: null,
    mainsHz: 50,
    sharedClock: false,
  });
  const problemTo = useRef(onProblem);
  problemTo.current = onProblem;

  const refreshDevices = useCallback(async () => {
    try {
      const listed = await listDevices();
      setDevices(listed);
      // With no interface set up the demo bench is the input, so the whole trim can be shown.
      if (listed.inputs.length === 0) setChoice((current) => (current.inputDeviceId === '' ? { ...current, inputDeviceId: DEMO_INPUT } : current));
    } catch (error) {
      problemTo.current(problemText(error, 'The audio devices could not be listed', 'The demo bench is chosen instead; reconnect the interface, then choose it under Input.'));
      setChoice((current) => ({ ...current, inputDeviceId: DEMO_INPUT }));
    }
  }, []);

  useEffect(() => void refreshDevices(), [refreshDevices]);

  // At start the station's saved mains and default audio are the choice, once its devices are
  // listed (a default whose device is not connected is left aside: the bench keeps the system's).
  // A choice the technician made before the settings arrived is theirs: the defaults never replace it.
  const defaultAudioApplied = useRef(false);
  const chooseAudio = useCallback((next: AudioChoice) => {
    defaultAudioApplied.current = true;
    setChoice(next);
  }, []);
  useEffect(() => {
    if (defaultAudioApplied.current || !stationCalibration || !devices) return;
    defaultAudioApplied.current = true;
    const { defaultAudio, mainsHz } = stationCalibration.settings;
    const present = (id: string, list: MediaDeviceInfo[]) => id === '' || list.some((d) => d.deviceId === id);
    const usable =
      defaultAudio !== null &&
      (defaultAudio.inputDeviceId === DEMO_INPUT || present(defaultAudio.inputDeviceId, devices.inputs)) &&
      present(defaultAudio.outputDeviceId, devices.outputs);
    setChoice((current) => ({
      ...current,
      mainsHz,
      ...(usable && defaultAudio
        ? {
            inputDeviceId: defaultAudio.inputDeviceId,
            outputDeviceId: defaultAudio.outputDeviceId,
            channel: defaultAudio.inputChannel,
            secondChannel: defaultAudio.secondInputChannel ?? null,
            sampleRateHz: defaultAudio.sampleRateHz,
          }
        : {}),
    }));
  }, [stationCalibration, devices]);

  /** Saved station settings carry the mains frequency into the choice at once. */
  const setMainsHz = useCallback((mainsHz: AudioChoice['mainsHz']) => setChoice((current) => ({ ...current, mainsHz })), []);

  /** The chosen audio setup in the words a calibration stores; `rateHz` is the rate it runs at. */
  const describeChoice = useCallback(
    (rateHz: number): StationAudioSetup => {
      const label = (id: string, list: MediaDeviceInfo[] | undefined, fallback: string) =>
        id === DEMO_INPUT ? 'Demo bench' : (list?.find((d) => d.deviceId === id)?.label || fallback);
      return {
        inputDeviceId: choice.inputDeviceId,
        inputDeviceLabel: label(choice.inputDeviceId, devices?.inputs, choice.inputDeviceId === '' ? 'System default input' : 'Input'),
        inputChannel: choice.channel,
        // The demo bench is one simulated channel.
        secondInputChannel: choice.inputDeviceId === DEMO_INPUT ? null : choice.secondChannel,
        outputDeviceId: choice.outputDeviceId,
        outputDeviceLabel: label(choice.outputDeviceId, devices?.outputs, choice.outputDeviceId === '' ? 'System default output' : 'Output'),
        sampleRateHz: rateHz,
      };
    },
    [choice.inputDeviceId, choice.outputDeviceId, choice.channel, choice.secondChannel, devices],
  );

  return { devices, choice, chooseAudio, setMainsHz, refreshDevices, describeChoice };
}
