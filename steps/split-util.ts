import { column, isMissing, type Frame } from '../core/frame.js';
import { DendrologError, messages } from '../core/messages.js';

/** Row indices of each group, groups in order of first appearance. */
export function rowsByGroup(frame: Frame, groups: string, rows?: ArrayLike<number>): Map<string, number[]> {
  const c = column(frame, groups);
  const values = c.values;
  const out = new Map<string, number[]>();
  const n = rows ? rows.length : frame.rows;
  let missing = 0;
  for (let k = 0; k < n; k++) if (isMissing(c, rows ? rows[k] : k)) missing++;
  // rows without a group would silently form one group of their own and stay together by accident
  if (missing > 0) throw new DendrologError(messages.groupsMissing(groups, missing), 1);
  for (let k = 0; k < n; k++) {
    const i = rows ? rows[k] : k;
    const g = String(values[i]);
    const list = out.get(g);
    if (list) list.push(i);
    else out.set(g, [i]);
  }
  return out;
}

/** The time column as numbers (dates in ms); stops if any of the given rows lacks a time. */
export function timesOf(frame: Frame, time: string, rows: ArrayLike<number>): Float64Array {
  const values = column(frame, time).values as Float64Array;
  let missing = 0;
  for (let k = 0; k < rows.length; k++) if (Number.isNaN(values[rows[k]])) missing++;
  if (missing > 0) throw new DendrologError(messages.timeMissing(time, missing), 1);
  return values;
}

/** One day in milliseconds: a gap for a date column is given in days. */
export const DAY_MS = 86_400_000;
