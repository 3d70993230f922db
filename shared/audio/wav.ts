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

export function decodeWav(bytes: Uint8Array): DecodedWav {
  if (bytes.length < 12) throw new WavFormatError('file is too short to be a WAV file');
  const view = new DataView(bytes.buffer, bytes.byteOffset, bytes.byteLength);
  if (fourCC(view, 0) !== 'RIFF' || fourCC(view, 8) !== 'WAVE') throw new WavFormatError('not a RIFF/WAVE file');

  let format: { tag: number; channelCount: number; sampleRateHz: number; blockAlign: number; bitsPerSample: number } | null =
    null;
  let data: { at: number; size: number } | null = null;
  for (let at = 12; at + 8 <= bytes.length; ) {
    const id = fourCC(view, at);
    const size = view.getUint32(at + 4, true);
    const body = at + 8;
    if (id === 'fmt ') {
      if (size < 16 || body + size > bytes.length) throw new WavFormatError('fmt chunk is truncated');
      let tag = view.getUint16(body, true);
      if (tag === FORMAT_EXTENSIBLE) {
        if (size < 40) throw new WavFormatError('extensible fmt chunk is truncated');
        tag = view.getUint16(body + 24, true); // first two bytes of the sub-format GUID
      }
      format = {
        tag,
        channelCount: view.getUint16(body + 2, true),
        sampleRateHz: view.getUint32(body + 4, true),
        blockAlign: view.getUint16(body + 12, true),
        bitsPerSample: view.getUint16(body + 14, true),
      };
    } else if (id === 'data') {
      const available = bytes.length - body;
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
  const bytesPerSample = bitsPerSample / 8;
  const supported = encoding === 'pcm' ? [8, 16, 24, 32] : [32, 64];
  if (!supported.includes(bitsPerSample)) {
    throw new WavFormatError(`unsupported ${encoding} sample size ${bitsPerSample} bits`);
  }
  const blockAlign = channelCount * bytesPerSample;
  const frameCount = Math.floor(data.size / blockAlign);
  if (frameCount === 0) throw new WavFormatError('the data chunk holds no samples');

  const channels = Array.from({ length: channelCount }, () => new Float64Array(frameCount));
  const read = sampleReader(view, encoding, bitsPerSample);
  for (let frame = 0; frame < frameCount; frame++) {
    const frameAt = data.at + frame * blockAlign;
    for (let ch = 0; ch < channelCount; ch++) channels[ch][frame] = read(frameAt + ch * bytesPerSample);
  }
  return { sampleRateHz, bitsPerSample, encoding, channels };
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
