// Seeded pseudo-random numbers so noise tests are repeatable (mulberry32, public domain).

import { mulberry32 } from '../../shared/dsp/seeded-noise.ts';

export const seededRandom = mulberry32;

/** Standard normal deviates by the Box–Muller transform. */
export function gaussian(random: () => number): () => number {
  return () => Math.sqrt(-2 * Math.log(1 - random())) * Math.cos(2 * Math.PI * random());
}
