// Number formatting for readouts, sheets and the command line: fixed decimals, a real minus sign.
// In shared/ because the sheet's content (shared/sheet) is composed here, not in a view.

export function fixed(value: number | null | undefined, decimals: number): string {
  if (value === null || value === undefined || !Number.isFinite(value)) return '—';
  return value.toFixed(decimals).replace('-', '−');
}

/** A setting as a file gives it, without trailing zeros: 1, 0.25, 12.5 (at most `decimals` decimals). */
export function compactNumber(value: number, decimals = 2): string {
  if (!Number.isFinite(value)) return '—';
  return String(Number(value.toFixed(decimals))).replace('-', '−');
}

export function percent(value: number): string {
  if (!Number.isFinite(value)) return '—';
  if (value === 0) return '0 %';
  const decimals = value >= 1 ? 2 : Math.min(6, 1 - Math.floor(Math.log10(value)));
  return `${value.toFixed(decimals)} %`;
}

/**
 * Reasons, each one plain sentence, run together as prose. A reason that ends on a quoted message
 * or a figure without its full stop gets one, so two never read as one ("there is one The final …").
 */
export function asSentences(parts: readonly string[]): string {
  return parts
    .map((part) => part.trim())
    .filter((part) => part.length > 0)
    .map((part) => (/[.!?…][”’"')\]]*$/.test(part) ? part : `${part}.`))
    .join(' ');
}

const SI_PREFIXES: ReadonlyArray<[number, string]> = [
  [1e9, 'G'],
  [1e6, 'M'],
  [1e3, 'k'],
  [1, ''],
  [1e-3, 'm'],
  [1e-6, 'µ'],
  [1e-9, 'n'],
  [1e-12, 'p'],
];

/** A value with an SI prefix on its unit and `significant` digits: 955.1 kHz, 1.61 µs, −0.500 V. */
export function withPrefix(value: number | null | undefined, unit: string, significant = 4): string {
  if (value === null || value === undefined || !Number.isFinite(value)) return '—';
  if (value === 0) return `0 ${unit}`;
  const [factor, prefix] = SI_PREFIXES.find(([f]) => Math.abs(value) >= f * 0.9995) ?? SI_PREFIXES[SI_PREFIXES.length - 1];
  return `${(value / factor).toPrecision(significant).replace('-', '−')} ${prefix}${unit}`;
}
