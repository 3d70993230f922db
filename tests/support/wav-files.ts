// Writes test tones as 32-bit float WAV (Chromium's fake capture reads that format bit-exactly).
// The fake device loops the file, so the tone must hold whole cycles to loop without a seam.

import { writeFileSync } from 'node:fs';
import { encodeWavFloat32 } from '../../shared/audio/wav.ts';
import { tone, type TonePartial } from './signals.ts';

export function writeToneWav(
  path: string,
  { frequencyHz, levelDbfs, partials = [], seconds = 1, sampleRateHz = 44100, channels = 2, channelOffsetsDb = [] }: {
    frequencyHz: number;
    levelDbfs: number;
    partials?: TonePartial[];
    seconds?: number;
    sampleRateHz?: number;
    channels?: number;
    /** Each channel's level relative to `levelDbfs` (dB; a missing entry is 0). */
    channelOffsetsDb?: number[];
  },
): string {
  const length = Math.round(seconds * sampleRateHz);
  const cycles = (frequencyHz * length) / sampleRateHz;
  if (Math.abs(cycles - Math.round(cycles)) > 1e-9) throw new Error(`${frequencyHz} Hz does not fit whole cycles in the file`);
  const samples = Float32Array.from(tone(length, sampleRateHz, frequencyHz, 10 ** (levelDbfs / 20), { partials }));
  const channel = (c: number) => {
    const gain = 10 ** ((channelOffsetsDb[c] ?? 0) / 20);
    return gain === 1 ? samples : samples.map((x) => x * gain);
  };
  writeFileSync(path, encodeWavFloat32(Array.from({ length: channels }, (_, c) => channel(c)), sampleRateHz));
  return path;
}

/** Encodes mono samples as 24-bit PCM WAV, written byte by byte from the RIFF layout. */
export function encodePcm24(samples: ArrayLike<number>, sampleRateHz: number): Uint8Array {
  const dataSize = samples.length * 3;
  const bytes = new Uint8Array(44 + dataSize);
  const view = new DataView(bytes.buffer);
  const ascii = (at: number, text: string) => [...text].forEach((c, i) => view.setUint8(at + i, c.charCodeAt(0)));
  ascii(0, 'RIFF');
  view.setUint32(4, 36 + dataSize, true);
  ascii(8, 'WAVE');
  ascii(12, 'fmt ');
  view.setUint32(16, 16, true);
  view.setUint16(20, 1, true); // PCM
  view.setUint16(22, 1, true);
  view.setUint32(24, sampleRateHz, true);
  view.setUint32(28, sampleRateHz * 3, true);
  view.setUint16(32, 3, true);
  view.setUint16(34, 24, true);
  ascii(36, 'data');
  view.setUint32(40, dataSize, true);
  for (let i = 0; i < samples.length; i++) {
    const code = Math.max(-8388608, Math.min(8388607, Math.round(samples[i] * 8388608)));
    view.setUint8(44 + 3 * i, code & 0xff);
    view.setUint8(45 + 3 * i, (code >> 8) & 0xff);
    view.setUint8(46 + 3 * i, (code >> 16) & 0xff);
  }
  return bytes;
}
