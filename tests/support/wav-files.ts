// Writes test tones as 32-bit float WAV (Chromium's fake capture reads that format bit-exactly).
// The fake device loops the file, so the tone must hold whole cycles to loop without a seam.

import { writeFileSync } from 'node:fs';
import { encodeWavFloat32 } from '../../shared/audio/wav.ts';
import { tone, type Partial } from './signals.ts';

export function writeToneWav(
  path: string,
  { frequencyHz, levelDbfs, partials = [], seconds = 1, sampleRateHz = 44100, channels = 2 }: {
    frequencyHz: number;
    levelDbfs: number;
    partials?: Partial[];
    seconds?: number;
    sampleRateHz?: number;
    channels?: number;
  },
): string {
  const length = Math.round(seconds * sampleRateHz);
  const cycles = (frequencyHz * length) / sampleRateHz;
  if (Math.abs(cycles - Math.round(cycles)) > 1e-9) throw new Error(`${frequencyHz} Hz does not fit whole cycles in the file`);
  const samples = Float32Array.from(tone(length, sampleRateHz, frequencyHz, 10 ** (levelDbfs / 20), { partials }));
  writeFileSync(path, encodeWavFloat32(Array.from({ length: channels }, () => samples), sampleRateHz));
  return path;
}
