/**
 * Number formats of the report. Locale-free on purpose: the same journal gives the same document on
 * every machine, whatever its locale.
 */

/** An integer with thousands separated by commas: 5000000 → '5,000,000'. */
export function grouped(value: number): string {
  const sign = value < 0 ? '-' : '';
  const digits = String(Math.round(Math.abs(value)));
  return sign + digits.replace(/\B(?=(\d{3})+$)/g, ',');
}

/** A figure with `digits` decimals; null, NaN and infinities read '—'. */
export function fixed(value: number | null, digits: number): string {
  return value === null || !Number.isFinite(value) ? '—' : value.toFixed(digits);
}

/** A share in [0, 1] as a percentage: 0.93412 → '93.41%'. */
export function percent(value: number | null, digits = 2): string {
  return value === null || !Number.isFinite(value) ? '—' : `${(100 * value).toFixed(digits)}%`;
}

/** A row count for an axis label, short: 2500 → '2.5k', 1500000 → '1.5M'. */
export function compactRows(value: number): string {
  const abs = Math.abs(value);
  if (abs >= 1e9) return `${trim(value / 1e9)}G`;
  if (abs >= 1e6) return `${trim(value / 1e6)}M`;
  if (abs >= 1e3) return `${trim(value / 1e3)}k`;
  return trim(value);
}

/** Up to three significant decimals, trailing zeros dropped: 2.50 → '2.5'. */
function trim(value: number): string {
  return String(Number(value.toFixed(3)));
}
