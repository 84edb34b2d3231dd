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

/**
 * What identifies each of some rows as a unit of a random split: its values in every column of the
 * model table, by column name (so column order does not matter), as canonical text. Two rows with
 * equal values are the same unit for the draw; which of them lands where cannot change a result.
 *
 * Example: a row with tp 0.12 and lake "L1" is `[["lake","L1"],["tp",0.12]]`.
 */
export function rowIdentities(frame: Frame, rows: ArrayLike<number>): string[] {
  const columns = [...frame.columns].sort((a, b) => (a.name < b.name ? -1 : a.name > b.name ? 1 : 0));
  const out = new Array<string>(rows.length);
  for (let k = 0; k < rows.length; k++) {
    const r = rows[k];
    out[k] = JSON.stringify(columns.map((c) => [c.name, isMissing(c, r) ? null : c.values[r]]));
  }
  return out;
}

/**
 * Positions 0..ids.length-1 in the order a split takes its units: by each unit's own draw (see
 * StepContext.unitDraw), then by identity, then by position for equal units. The order of any two
 * units depends on them alone, so adding or removing a unit leaves the others' order as it was.
 *
 * Example: `drawOrder(['L1', 'L2', 'L3'], (id) => ctx.unitDraw('holdout', id))` might be `[2, 0, 1]`.
 */
export function drawOrder(ids: string[], draw: (id: string) => number): number[] {
  const d = ids.map(draw);
  return ids
    .map((_, k) => k)
    .sort((a, b) => d[a] - d[b] || (ids[a] < ids[b] ? -1 : ids[a] > ids[b] ? 1 : 0) || a - b);
}
