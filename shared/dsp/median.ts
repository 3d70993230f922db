/** The median of the values (the mean of the middle two for an even count); NaN when there are none. */
export function median(values: ArrayLike<number>): number {
  const n = values.length;
  if (n === 0) return NaN;
  const sorted = Float64Array.from(values).sort();
  const half = n >> 1;
  return n % 2 === 1 ? sorted[half] : (sorted[half - 1] + sorted[half]) / 2;
}
