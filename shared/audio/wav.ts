// RIFF/WAVE reading and writing. Reads PCM 8/16/24/32-bit, IEEE float 32/64 and
// WAVE_FORMAT_EXTENSIBLE with any channel count; writes 32-bit float, which Chromium's
// fake capture device passes through bit-exactly.

export class WavFormatError extends Error {
  override name = 'WavFormatError';
}

export interface DecodedWav {
  sampleRateHz: number;
  bitsPerSample: number;
  encoding: 'pcm' | 'float';
  /** One array per channel, samples scaled to ±1 full scale. */
  channels: Float64Array[];
}

const FORMAT_PCM = 1;
const FORMAT_FLOAT = 3;
const FORMAT_EXTENSIBLE = 0xfffe;

function fourCC(view: DataView, at: number): string {
  return String.fromCharCode(view.getUint8(at), view.getUint8(at + 1), view.getUint8(at + 2), view.getUint8(at + 3));
}

/** Where a WAV file's samples lie and how they are coded: all a reader needs to take them in pieces. */
export interface WavLayout {
  sampleRateHz: number;
  bitsPerSample: number;
  encoding: 'pcm' | 'float';
  channelCount: number;
  /** Bytes per frame (one sample of every channel). */
  blockAlign: number;
  /** Byte offset of the first sample in the file. */
  dataOffset: number;
  frameCount: number;
}

/**
 * Walks the RIFF chunks through `readAt` (which returns up to `length` bytes at `offset`; fewer at
 * the end of the file), so a file of any size is laid out without holding its samples: only chunk
 * headers and the fmt body are read.
 */
export function readWavLayout(readAt: (offset: number, length: number) => Uint8Array, fileSize: number): WavLayout {
  if (fileSize < 12) throw new WavFormatError('file is too short to be a WAV file');
  const head = readAt(0, 12);
  const headView = new DataView(head.buffer, head.byteOffset, head.byteLength);
  if (fourCC(headView, 0) !== 'RIFF' || fourCC(headView, 8) !== 'WAVE') throw new WavFormatError('not a RIFF/WAVE file');

  let format: { tag: number; channelCount: number; sampleRateHz: number; bitsPerSample: number } | null = null;
  let data: { at: number; size: number } | null = null;
  for (let at = 12; at + 8 <= fileSize; ) {
    const header = readAt(at, 8);
    const view = new DataView(header.buffer, header.byteOffset, header.byteLength);
    const id = fourCC(view, 0);
    const size = view.getUint32(4, true);
    const body = at + 8;
    if (id === 'fmt ') {
      if (size < 16 || body + size > fileSize) throw new WavFormatError('fmt chunk is truncated');
      // Only the first 40 bytes mean anything to us; a huge declared size is not read.
      const fmt = readAt(body, Math.min(size, 40));
      const fmtView = new DataView(fmt.buffer, fmt.byteOffset, fmt.byteLength);
      let tag = fmtView.getUint16(0, true);
      if (tag === FORMAT_EXTENSIBLE) {
        if (size < 40) throw new WavFormatError('extensible fmt chunk is truncated');
        tag = fmtView.getUint16(24, true); // first two bytes of the sub-format GUID
      }
      format = {
        tag,
        channelCount: fmtView.getUint16(2, true),
        sampleRateHz: fmtView.getUint32(4, true),
        bitsPerSample: fmtView.getUint16(14, true),
      };
    } else if (id === 'data') {
      const available = fileSize - body;
      // A streaming writer that never came back to fill in the size leaves 0 or 0xFFFFFFFF: take what is there.
      const unknownSize = size === 0 || size === 0xffffffff;
      if (!unknownSize && size > available) {
        throw new WavFormatError(`data chunk is truncated: it declares ${size} bytes but the file holds ${available}`);
      }
      data = { at: body, size: unknownSize ? available : size };
      if (format) break;
    }
    at = body + size + (size % 2);
  }
  if (!format) throw new WavFormatError('no fmt chunk');
  if (!data) throw new WavFormatError('no data chunk');

  const { tag, channelCount, sampleRateHz, bitsPerSample } = format;
  if (channelCount < 1) throw new WavFormatError('the file declares no channels');
  if (!(sampleRateHz > 0)) throw new WavFormatError('the file declares no sample rate');
  const encoding = tag === FORMAT_PCM ? 'pcm' : tag === FORMAT_FLOAT ? 'float' : null;
  if (!encoding) throw new WavFormatError(`unsupported sample format tag ${tag} (PCM and IEEE float are supported)`);
  const supported = encoding === 'pcm' ? [8, 16, 24, 32] : [32, 64];
  if (!supported.includes(bitsPerSample)) {
    throw new WavFormatError(`unsupported ${encoding} sample size ${bitsPerSample} bits`);
  }
  // Frames are packed at the sample size; the declared block align is not trusted.
  const blockAlign = channelCount * (bitsPerSample / 8);
  const frameCount = Math.floor(data.size / blockAlign);
  if (frameCount === 0) throw new WavFormatError('the data chunk holds no samples');
  return { sampleRateHz, bitsPerSample, encoding, channelCount, blockAlign, dataOffset: data.at, frameCount };
}

/**
 * Decodes one channel of `frames` whole frames held in `bytes` (starting at a frame boundary) into
 * `out` from `outOffset`, scaled to ±1 full scale.
 */
export function decodeChannel(bytes: Uint8Array, layout: WavLayout, channel: number, frames: number, out: Float64Array, outOffset = 0): void {
  const view = new DataView(bytes.buffer, bytes.byteOffset, bytes.byteLength);
  const read = sampleReader(view, layout.encoding, layout.bitsPerSample);
  const at = channel * (layout.bitsPerSample / 8);
  for (let frame = 0; frame < frames; frame++) out[outOffset + frame] = read(frame * layout.blockAlign + at);
}

export function decodeWav(bytes: Uint8Array): DecodedWav {
  const layout = readWavLayout((offset, length) => bytes.subarray(offset, offset + length), bytes.length);
  const data = bytes.subarray(layout.dataOffset, layout.dataOffset + layout.frameCount * layout.blockAlign);
  const channels = Array.from({ length: layout.channelCount }, (_, ch) => {
    const samples = new Float64Array(layout.frameCount);
    decodeChannel(data, layout, ch, layout.frameCount, samples);
    return samples;
  });
  return { sampleRateHz: layout.sampleRateHz, bitsPerSample: layout.bitsPerSample, encoding: layout.encoding, channels };
}

function sampleReader(view: DataView, encoding: 'pcm' | 'float', bits: number): (at: number) => number {
  if (encoding === 'float') return bits === 32 ? (at) => view.getFloat32(at, true) : (at) => view.getFloat64(at, true);
  switch (bits) {
    case 8:
      return (at) => (view.getUint8(at) - 128) / 128;
    case 16:
      return (at) => view.getInt16(at, true) / 32768;
    case 24:
      return (at) => ((view.getUint8(at) | (view.getUint8(at + 1) << 8) | (view.getInt8(at + 2) << 16)) / 8388608);
    default:
      return (at) => view.getInt32(at, true) / 2147483648;
  }
}

/** Encodes channels (equal lengths) as 32-bit IEEE float WAV. */
export function encodeWavFloat32(channels: ArrayLike<number>[], sampleRateHz: number): Uint8Array {
  const channelCount = channels.length;
  const frameCount = channels[0]?.length ?? 0;
  const dataSize = frameCount * channelCount * 4;
  const bytes = new Uint8Array(44 + dataSize);
  const view = new DataView(bytes.buffer);
  const ascii = (at: number, text: string) => {
    for (let i = 0; i < 4; i++) view.setUint8(at + i, text.charCodeAt(i));
  };
  ascii(0, 'RIFF');
  view.setUint32(4, 36 + dataSize, true);
  ascii(8, 'WAVE');
  ascii(12, 'fmt ');
  view.setUint32(16, 16, true);
  view.setUint16(20, FORMAT_FLOAT, true);
  view.setUint16(22, channelCount, true);
  view.setUint32(24, sampleRateHz, true);
  view.setUint32(28, sampleRateHz * channelCount * 4, true);
  view.setUint16(32, channelCount * 4, true);
  view.setUint16(34, 32, true);
  ascii(36, 'data');
  view.setUint32(40, dataSize, true);
  for (let frame = 0; frame < frameCount; frame++) {
    for (let ch = 0; ch < channelCount; ch++) view.setFloat32(44 + (frame * channelCount + ch) * 4, channels[ch][frame], true);
  }
  return bytes;
}
