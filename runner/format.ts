/**
 * Number formatting for the report and summary: stable across machines (no locale), enough digits
 * to compare, never "NaN".
 *
 * Example: `formatNumber(0.123456) === '0.123'`, `formatNumber(1234.5) === '1234.5'`, `formatNumber(6.1e300) === '6.100e+300'`, `formatNumber(null) === '—'`
 */
export function formatNumber(v: number | null | undefined, digits = 3): string {
  if (v === null || v === undefined || Number.isNaN(v)) return '—';
  if (!Number.isFinite(v)) return v > 0 ? '∞' : '−∞';
  const a = Math.abs(v);
  let s: string;
  // from a billion on, digits past the fourth are noise to a reader: 6.125e+300, not 17 digits
  if (a >= 1e9) s = v.toExponential(digits);
  else if (a >= 1000) s = v.toFixed(1);
  else if (a >= 100) s = v.toFixed(Math.max(1, digits - 2));
  // below 1e-9 a value is rounding noise (a bias of 5e-15 on training rows), not information
  else if (a >= 0.01 || a < 1e-9) s = v.toFixed(digits);
  else s = v.toPrecision(digits);
  // a value that rounds to zero carries no sign
  if (/^-0\.?0*$/.test(s)) s = s.slice(1);
  return s.replace(/^-/, '−');
}

/** An integer with thin separators, such as "12 480". */
export function formatCount(n: number): string {
  return String(n).replace(/\B(?=(\d{3})+(?!\d))/g, '\u2009');
}

/** A value from a grid cell or hyperparameter list: null reads as "none". */
export function formatSetting(v: unknown): string {
  if (v === null) return 'none';
  if (Array.isArray(v)) return v.map(formatSetting).join(', ');
  return String(v);
}
