// WAV reading against files laid out byte by byte from the RIFF/WAVE format description
// (Microsoft/IBM RIFF specification; WAVE_FORMAT_EXTENSIBLE sub-format GUIDs).

import { describe, expect, it } from 'vitest';
import { decodeWav, encodeWavFloat32 } from '../../shared/audio/wav.ts';

interface Layout {
  formatTag: number;
  channels: number;
  rate: number;
  bits: number;
  data: Uint8Array;
  extensibleSubFormat?: number;
  declaredDataSize?: number;
}

function wavBytes({ formatTag, channels, rate, bits, data, extensibleSubFormat, declaredDataSize }: Layout): Uint8Array {
  const fmtSize = extensibleSubFormat === undefined ? 16 : 40;
  const bytes = new Uint8Array(12 + 8 + fmtSize + 8 + data.length);
  const view = new DataView(bytes.buffer);
  const ascii = (at: number, text: string) => [...text].forEach((c, i) => view.setUint8(at + i, c.charCodeAt(0)));
  ascii(0, 'RIFF');
  view.setUint32(4, bytes.length - 8, true);
  ascii(8, 'WAVE');
  ascii(12, 'fmt ');
  view.setUint32(16, fmtSize, true);
  view.setUint16(20, formatTag, true);
  view.setUint16(22, channels, true);
  view.setUint32(24, rate, true);
  view.setUint32(28, (rate * channels * bits) / 8, true);
  view.setUint16(32, (channels * bits) / 8, true);
  view.setUint16(34, bits, true);
  if (extensibleSubFormat !== undefined) {
    view.setUint16(36, 22, true); // cbSize
    view.setUint16(38, bits, true); // valid bits
    view.setUint32(40, 0, true); // channel mask
    view.setUint16(44, extensibleSubFormat, true); // GUID starts with the format tag
  }
  const dataAt = 20 + fmtSize;
  ascii(dataAt, 'data');
  view.setUint32(dataAt + 4, declaredDataSize ?? data.length, true);
  bytes.set(data, dataAt + 8);
  return bytes;
}

const le16 = (...values: number[]) => new Uint8Array(new Int16Array(values).buffer);

describe('decodeWav', () => {
  it('reads 16-bit PCM: 16384 is half scale, −32768 is −full scale', () => {
    const wav = decodeWav(wavBytes({ formatTag: 1, channels: 1, rate: 44100, bits: 16, data: le16(16384, -32768, 0) }));
    expect(wav.sampleRateHz).toBe(44100);
    expect(Array.from(wav.channels[0])).toEqual([0.5, -1, 0]);
  });

  it('reads 24-bit PCM little-endian with sign', () => {
    // 0x400000 = 4194304 = half of 2^23; 0xC00000 is −4194304.
    const data = new Uint8Array([0x00, 0x00, 0x40, 0x00, 0x00, 0xc0]);
    const wav = decodeWav(wavBytes({ formatTag: 1, channels: 1, rate: 48000, bits: 24, data }));
    expect(Array.from(wav.channels[0])).toEqual([0.5, -0.5]);
  });

  it('reads 8-bit PCM as unsigned with 128 at zero', () => {
    const wav = decodeWav(wavBytes({ formatTag: 1, channels: 1, rate: 8000, bits: 8, data: new Uint8Array([128, 192, 0]) }));
    expect(Array.from(wav.channels[0])).toEqual([0, 0.5, -1]);
  });

  it('reads 32-bit PCM, float 64 and interleaved channels', () => {
    const pcm32 = new Uint8Array(new Int32Array([1073741824, -2147483648]).buffer);
    expect(Array.from(decodeWav(wavBytes({ formatTag: 1, channels: 1, rate: 96000, bits: 32, data: pcm32 })).channels[0])).toEqual([
      0.5, -1,
    ]);
    const f64 = new Uint8Array(new Float64Array([0.25, -0.75, 0.125, 1]).buffer);
    const stereo = decodeWav(wavBytes({ formatTag: 3, channels: 2, rate: 96000, bits: 64, data: f64 }));
    expect(Array.from(stereo.channels[0])).toEqual([0.25, 0.125]);
    expect(Array.from(stereo.channels[1])).toEqual([-0.75, 1]);
  });

  it('reads WAVE_FORMAT_EXTENSIBLE by its sub-format', () => {
    const wav = decodeWav(wavBytes({ formatTag: 0xfffe, extensibleSubFormat: 1, channels: 1, rate: 48000, bits: 16, data: le16(-16384) }));
    expect(Array.from(wav.channels[0])).toEqual([-0.5]);
  });

  it('round-trips 32-bit float exactly through encodeWavFloat32', () => {
    const samples = Float32Array.from([0.1, -0.2, 0.999, -1]);
    const wav = decodeWav(encodeWavFloat32([samples, samples.map((x) => -x)], 44100));
    expect(wav.encoding).toBe('float');
    expect(Float32Array.from(wav.channels[0])).toEqual(samples);
    expect(Float32Array.from(wav.channels[1])).toEqual(samples.map((x) => -x));
  });

  it('takes what is there when a streaming writer left the size unset', () => {
    const wav = decodeWav(wavBytes({ formatTag: 1, channels: 1, rate: 44100, bits: 16, data: le16(1, 2), declaredDataSize: 0xffffffff }));
    expect(wav.channels[0].length).toBe(2);
  });

  it.each([
    ['not RIFF', new TextEncoder().encode('ID3 this is an mp3, honestly'), /not a RIFF\/WAVE file/],
    ['too short', new Uint8Array([0x52, 0x49]), /too short/],
    ['truncated data', wavBytes({ formatTag: 1, channels: 1, rate: 44100, bits: 16, data: le16(1, 2), declaredDataSize: 400 }), /truncated/],
    ['A-law', wavBytes({ formatTag: 6, channels: 1, rate: 8000, bits: 8, data: new Uint8Array(4) }), /unsupported sample format tag 6/],
    ['12-bit PCM', wavBytes({ formatTag: 1, channels: 1, rate: 8000, bits: 12, data: new Uint8Array(6) }), /unsupported pcm sample size 12/],
    ['empty data', wavBytes({ formatTag: 1, channels: 1, rate: 8000, bits: 16, data: new Uint8Array(0) }), /no samples/],
  ])('rejects a file that is %s with a message', (_what, bytes, message) => {
    expect(() => decodeWav(bytes)).toThrow(message);
  });
});
