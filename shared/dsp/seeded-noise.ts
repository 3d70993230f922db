// Seeded pseudo-random numbers, so simulated units, stimuli and test signals are repeatable on
// every platform: mulberry32 (public domain) for uniform deviates, and the Box–Muller transform
// (both of its outputs, no allocation per call) for standard normal ones.

export function mulberry32(seed: number): () => number {
  let state = seed >>> 0;
  return () => {
    state = (state + 0x6d2b79f5) >>> 0;
    let t = state;
    t = Math.imul(t ^ (t >>> 15), t | 1);
    t ^= t + Math.imul(t ^ (t >>> 7), t | 61);
    return ((t ^ (t >>> 14)) >>> 0) / 4294967296;
  };
}

/** Standard normal deviates from a uniform source, the second of each Box–Muller pair kept for the next call. */
export class GaussianNoise {
  private spare: number | null = null;
  private readonly random: () => number;
  constructor(random: () => number) {
    this.random = random;
  }

  next(): number {
    if (this.spare !== null) {
      const value = this.spare;
      this.spare = null;
      return value;
    }
    const radius = Math.sqrt(-2 * Math.log(1 - this.random()));
    const angle = 2 * Math.PI * this.random();
    this.spare = radius * Math.sin(angle);
    return radius * Math.cos(angle);
  }
}
