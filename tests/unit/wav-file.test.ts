// Reading a WAV from disk in pieces (cli/wav-file.ts) against a file built sample by sample: 24-bit
// PCM is little-endian two's complement scaled by 2^23 (RIFF/WAVE format description), and channels
// are interleaved frame by frame. The file is larger than one read, so pieces must join exactly.

import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { writeFileSync } from 'node:fs';
import { join } from 'node:path';
import { readWavLayout } from '../../shared/audio/wav.ts';
import { openWavFile } from '../../cli/wav-file.ts';
import { tempDir } from '../support/station.ts';

let files: ReturnType<typeof tempDir>;
beforeAll(() => {
  files = tempDir('trimbench-wav-file-');
});
afterAll(() => files.remove());

const FRAMES = 300_000; // 1.8 MB of stereo 24-bit: more than one 1 MiB read
// A pattern that differs per frame and channel and covers negative values.
const value = (frame: number, channel: number) => (((frame * 7919 + channel * 104729) % 16_000_000) - 8_000_000);

function stereo24(extraChunk: boolean): Uint8Array {
  const list = extraChunk ? 8 + 10 : 0; // a LIST chunk before fmt, which readers must skip
  const dataBytes = FRAMES * 6;
  const bytes = new Uint8Array(12 + list + 24 + 8 + dataBytes);
  const view = new DataView(bytes.buffer);
  const ascii = (at: number, text: string) => [...text].forEach((c, i) => view.setUint8(at + i, c.charCodeAt(0)));
  ascii(0, 'RIFF');
  view.setUint32(4, bytes.length - 8, true);
  ascii(8, 'WAVE');
  let at = 12;
  if (extraChunk) {
    ascii(at, 'LIST');
    view.setUint32(at + 4, 10, true);
    at += 18;
  }
  ascii(at, 'fmt ');
  view.setUint32(at + 4, 16, true);
  view.setUint16(at + 8, 1, true);
  view.setUint16(at + 10, 2, true);
  view.setUint32(at + 12, 48000, true);
  view.setUint32(at + 16, 48000 * 6, true);
  view.setUint16(at + 20, 6, true);
  view.setUint16(at + 22, 24, true);
  at += 24;
  ascii(at, 'data');
  view.setUint32(at + 4, dataBytes, true);
  at += 8;
  for (let frame = 0; frame < FRAMES; frame++) {
    for (let ch = 0; ch < 2; ch++) {
      const v = value(frame, ch) & 0xffffff;
      bytes[at++] = v & 0xff;
      bytes[at++] = (v >> 8) & 0xff;
      bytes[at++] = (v >> 16) & 0xff;
    }
  }
  return bytes;
}

describe('openWavFile', () => {
  it('reads one channel of a file larger than one read, pieces joined exactly, from any offset', () => {
    const path = join(files.path, 'stereo24.wav');
    writeFileSync(path, stereo24(true));
    const wav = openWavFile(path);
    try {
      expect(wav.layout).toMatchObject({ sampleRateHz: 48000, channelCount: 2, bitsPerSample: 24, frameCount: FRAMES, encoding: 'pcm' });
      const start = 123_457;
      const into = new Float64Array(FRAMES - start);
      wav.channel(1).read(start, into);
      for (let i = 0; i < into.length; i++) {
        if (into[i] !== value(start + i, 1) / 8388608) throw new Error(`frame ${start + i}: ${into[i]}`);
      }
      expect(() => wav.channel(0).read(FRAMES - 10, new Float64Array(11))).toThrow(/outside the recording/);
    } finally {
      wav.close();
    }
  });
});

describe('readWavLayout', () => {
  it('reads only chunk headers and the fmt body, never the samples', () => {
    const bytes = stereo24(true);
    let requested = 0;
    const layout = readWavLayout((offset, length) => {
      requested += length;
      return bytes.subarray(offset, offset + length);
    }, bytes.length);
    // RIFF header 12 + LIST header 8 + fmt header 8 + fmt body 16 + data header 8.
    expect(requested).toBe(12 + 8 + 8 + 16 + 8);
    expect(layout.dataOffset).toBe(12 + 18 + 24 + 8);
  });
});
