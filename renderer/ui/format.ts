// Number formatting for readouts and sheets: fixed decimals, a real minus sign.

export function fixed(value: number | null | undefined, decimals: number): string {
  if (value === null || value === undefined || !Number.isFinite(value)) return '—';
  return value.toFixed(decimals).replace('-', '−');
}

export function percent(value: number): string {
  if (!Number.isFinite(value)) return '—';
  if (value === 0) return '0 %';
  const decimals = value >= 1 ? 2 : Math.min(6, 1 - Math.floor(Math.log10(value)));
  return `${value.toFixed(decimals)} %`;
}

/** Local date and time as YYYY-MM-DD HH:MM, the form used on sheets and tables. */
export function localDateTime(iso: string | null): string {
  if (!iso) return '—';
  const d = new Date(iso);
  const two = (n: number) => String(n).padStart(2, '0');
  return `${d.getFullYear()}-${two(d.getMonth() + 1)}-${two(d.getDate())} ${two(d.getHours())}:${two(d.getMinutes())}`;
}
