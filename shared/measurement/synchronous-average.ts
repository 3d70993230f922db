// Synchronous averaging: frames locked to the stimulus (each a whole number of its cycles, on the
// interface's own clock) are averaged sample by sample. The unit's harmonics are locked too and
// stay; hum and noise are not, and fall by about 10·log10(count) dB.

/**
 * Writes into `out` the average of the `count` consecutive frames of `frameSize` samples that end
 * at absolute sample `end` of a stream kept in `ring` (sample s lives at ring[s % ring.length]).
 * Consecutive frames are exactly one frame apart, so with whole cycles per frame they align.
 */
export function averageLockedFrames(
  ring: ArrayLike<number>,
  end: number,
  frameSize: number,
  count: number,
  out: Float64Array,
): Float64Array {
  const capacity = ring.length;
  if (count < 1 || count * frameSize > capacity || count * frameSize > end) {
    throw new Error(`cannot average ${count} frames of ${frameSize} from a ring of ${capacity} holding ${end} samples`);
  }
  const inverse = 1 / count;
  for (let i = 0; i < frameSize; i++) {
    let sum = 0;
    for (let j = 1; j <= count; j++) sum += ring[(end - j * frameSize + i) % capacity];
    out[i] = sum * inverse;
  }
  return out;
}
