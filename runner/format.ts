/**
 * The one number formatter of the report, the summary and compare, on `Intl.NumberFormat` with a
 * fixed locale (the same text on every machine): thin spaces between thousands, a true minus sign,
 * "—" for a missing value and never "NaN". Each kind of quantity has its style:
 *
 * - scores and other measured values (`formatNumber`): three significant digits, trailing zeros
 *   kept so a column of scores lines up, and never fewer digits than the integer part has;
 * - data values such as a column's range (`formatValue`): up to four significant digits, trailing
 *   zeros dropped;
 * - counts (`formatCount`), shares (`formatPercent`) and fixed decimals (`formatFixed`).
 *
 * From a billion on a value is written with an exponent and four significant digits; below 1e-9 it
 * is rounding noise (a bias of 5e-15 on training rows), written as 0.
 *
 * Example: `formatNumber(0.123456) === '0.123'`, `formatValue(-9999) === '−9 999'`, `formatCount(12480) === '12 480'`
 */

const THIN = '\u2009';
const MINUS = '\u2212';
const cache = new Map<string, Intl.NumberFormat>();

function formatter(options: Intl.NumberFormatOptions): Intl.NumberFormat {
  const key = JSON.stringify(options);
  let f = cache.get(key);
  if (!f) {
    f = new Intl.NumberFormat('en-US', { ...options, useGrouping: true });
    cache.set(key, f);
  }
  return f;
}

/** A value through Intl, with thin-space groups and a minus sign; a value that rounds to zero carries none. */
function intl(v: number, options: Intl.NumberFormatOptions): string {
  const parts = formatter(options).formatToParts(v);
  const zero = parts.every((p) => p.type !== 'integer' && p.type !== 'fraction' ? true : /^0*$/.test(p.value));
  return parts
    .map((p) => (p.type === 'group' ? THIN : p.type === 'minusSign' ? (zero ? '' : MINUS) : p.value))
    .join('');
}

/** Missing, infinite and huge values, which every style writes alike; null when v is an ordinary number. */
function special(v: number | null | undefined): string | null {
  if (v === null || v === undefined || Number.isNaN(v)) return '—';
  if (!Number.isFinite(v)) return v > 0 ? '∞' : `${MINUS}∞`;
  if (Math.abs(v) >= 1e9) return v.toExponential(3).replace(/^-/, MINUS);
  return null;
}

/** Digits before the decimal point of |v| (0 for values below 1). */
const integerDigits = (v: number) => (Math.abs(v) < 1 ? 0 : Math.floor(Math.log10(Math.abs(v))) + 1);

/** A score or measured value: `digits` significant digits (3), trailing zeros kept, whole integer part. */
export function formatNumber(v: number | null | undefined, digits = 3): string {
  const s = special(v);
  if (s !== null) return s;
  const x = Math.abs(v!) < 1e-9 ? 0 : v!;
  const sig = Math.min(21, Math.max(digits, integerDigits(x)));
  return intl(x, { minimumSignificantDigits: sig, maximumSignificantDigits: sig });
}

/**
 * A model score: R² (and skill, which is read like it) with three decimals, since it is bounded
 * above by 1 and read against 0 and 1; RMSE, MAE and bias, in the target's units, as formatNumber.
 *
 * Example: `formatMetric('r2', 0.99951) === '1.000'`, `formatMetric('rmse', 0.0903) === '0.0903'`
 */
export function formatMetric(metric: string, v: number | null | undefined): string {
  if (metric !== 'r2' || special(v) !== null) return formatNumber(v);
  return Math.abs(v!) < 1e-9 ? formatFixed(0, 3) : formatFixed(v, 3);
}

/** A data value, such as either end of a column's range: up to four significant digits, no trailing zeros. */
export function formatValue(v: number | null | undefined): string {
  const s = special(v);
  if (s !== null) return s;
  const x = Math.abs(v!) < 1e-9 ? 0 : v!;
  return intl(x, { maximumSignificantDigits: Math.min(21, Math.max(4, integerDigits(x))) });
}

/** A value with a fixed number of decimals, for axis ticks and seconds. */
export function formatFixed(v: number | null | undefined, decimals: number): string {
  const s = special(v);
  if (s !== null) return s;
  return intl(v!, { minimumFractionDigits: decimals, maximumFractionDigits: decimals });
}

/** A share (0.8 for 80%) as a percentage with `decimals` decimals, so a column of shares lines up: "80.0%", "87.5%". */
export function formatPercent(share: number | null | undefined, decimals = 1): string {
  const s = special(share);
  if (s !== null) return s;
  return `${intl(share! * 100, { minimumFractionDigits: decimals, maximumFractionDigits: decimals })}%`;
}

/** An integer with thin separators, such as "12 480". */
export function formatCount(n: number): string {
  return intl(n, { maximumFractionDigits: 0 });
}

/** A value from a grid cell or hyperparameter list: null reads as "none". */
export function formatSetting(v: unknown): string {
  if (v === null) return 'none';
  if (Array.isArray(v)) return v.map(formatSetting).join(', ');
  return String(v);
}
