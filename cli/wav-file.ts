// A WAV file read from disk a piece at a time: the header first, then only the samples asked for,
// through one fixed byte buffer, so memory does not grow with the file.

import { closeSync, fstatSync, openSync, readSync } from 'node:fs';
import { decodeChannel, readWavLayout, type WavLayout } from '../shared/audio/wav.ts';
import type { SampleSource } from '../shared/measurement/record-analysis.ts';

// About 1 MiB of file per read; rounded down to whole frames when the file is opened.
const READ_BYTES = 1 << 20;

/** The file changed or ended under us while it was being read. */
export class WavReadError extends Error {
  override name = 'WavReadError';
}

export interface WavFile {
  layout: WavLayout;
  /** One channel of the file as a source of samples. */
  channel(index: number): SampleSource;
  close(): void;
}

export function openWavFile(path: string): WavFile {
  const fd = openSync(path, 'r');
  try {
    const size = fstatSync(fd).size;
    const readAt = (offset: number, length: number): Uint8Array => {
      const bytes = new Uint8Array(Math.max(0, Math.min(length, size - offset)));
      fill(fd, bytes, offset);
      return bytes;
    };
    const layout = readWavLayout(readAt, size);
    const framesPerRead = Math.max(1, Math.floor(READ_BYTES / layout.blockAlign));
    const buffer = new Uint8Array(framesPerRead * layout.blockAlign);
    return {
      layout,
      channel: (index) => ({
        length: layout.frameCount,
        read(start, into) {
          if (start < 0 || start + into.length > layout.frameCount) throw new RangeError(`samples ${start}–${start + into.length} lie outside the recording`);
          for (let done = 0; done < into.length; ) {
            const frames = Math.min(framesPerRead, into.length - done);
            const piece = buffer.subarray(0, frames * layout.blockAlign);
            fill(fd, piece, layout.dataOffset + (start + done) * layout.blockAlign);
            decodeChannel(piece, layout, index, frames, into, done);
            done += frames;
          }
        },
      }),
      close: () => closeSync(fd),
    };
  } catch (error) {
    closeSync(fd);
    throw error;
  }
}

/** Reads exactly bytes.length bytes at position; a file that shrinks under us is an error, not zeros. */
function fill(fd: number, bytes: Uint8Array, position: number): void {
  for (let got = 0; got < bytes.length; ) {
    const n = readSync(fd, bytes, got, bytes.length - got, position + got);
    if (n === 0) throw new WavReadError(`the file ended at byte ${position + got} while being read; was it changed during the analysis? Copy it somewhere stable and try again`);
    got += n;
  }
}
