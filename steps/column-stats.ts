import { column, type Frame } from '../core/frame.js';

/** The present (not missing) values of a number column over some rows, in row order. */
export function presentValues(frame: Frame, name: string, rows: ArrayLike<number>): number[] {
  const src = column(frame, name).values as Float64Array;
  const out: number[] = [];
  for (let i = 0; i < rows.length; i++) if (!Number.isNaN(src[rows[i]])) out.push(src[rows[i]]);
  return out;
}

/** The values of a column over some rows, a missing one replaced by `fill`. */
export function filledValues(frame: Frame, name: string, rows: ArrayLike<number>, fill: number): number[] {
  const src = column(frame, name).values as Float64Array;
  const out: number[] = [];
  for (let i = 0; i < rows.length; i++) out.push(Number.isNaN(src[rows[i]]) ? fill : src[rows[i]]);
  return out;
}

/** Arithmetic mean; NaN for no values. */
export function mean(v: number[]): number {
  return v.reduce((a, b) => a + b, 0) / v.length;
}

/** Median (the mean of the middle two for an even count); NaN for no values. */
export function median(v: number[]): number {
  if (v.length === 0) return NaN;
  const s = [...v].sort((a, b) => a - b);
  const m = s.length >> 1;
  return s.length % 2 ? s[m] : (s[m - 1] + s[m]) / 2;
}
