import { column, isMissing, type Frame } from '../core/frame.js';
import { DendrologError, messages } from '../core/messages.js';
import type { SplitBy } from '../core/recipe-types.js';

/** The model table's column holding each row's spatial block, when the recipe declares blocks. */
export const BLOCK_COLUMN = '__dendrolog_block';

/**
 * The column whose values are a split's units: the groups for by: groups, the spatial block for
 * by: blocks; null for splits of single rows or by time.
 */
export function unitColumn(by: SplitBy, groups: string | null): string | null {
  return by === 'groups' ? groups : by === 'blocks' ? BLOCK_COLUMN : null;
}

/**
 * The square block of side `size` a point lies in, named by its lower-left corner; blocks are laid
 * from the coordinates' origin, so a block's name depends on nothing but the point and the size.
 *
 * Example: `blockName(1234, -56, 1000)` is `'x1000 y-1000'`.
 */
export function blockName(x: number, y: number, size: number): string {
  const corner = (v: number) => String(+(Math.floor(v / size) * size).toPrecision(12));
  return `x${corner(x)} y${corner(y)}`;
}

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
 * What identifies each of some rows as a unit of a split without groups: its values in the key
 * columns (the target and the time column: not the predictors, so adding or dropping one moves
 * nothing), by column name, as canonical text; rows with equal keys are told apart by their rank
 * among themselves, ordered by all their values (equal rows are interchangeable anyway).
 *
 * Example: a row with y 0.12 and day 1 (ms) is `[["day",1],["y",0.12]]`; two rows with that key are `…#0` and `…#1`.
 */
export function rowIdentities(frame: Frame, rows: ArrayLike<number>, keyColumns: string[]): string[] {
  const byName = (a: { name: string }, b: { name: string }) => (a.name < b.name ? -1 : a.name > b.name ? 1 : 0);
  const keys = frame.columns.filter((c) => keyColumns.includes(c.name)).sort(byName);
  const all = [...frame.columns].sort(byName);
  const text = (columns: typeof all, r: number) => JSON.stringify(columns.map((c) => [c.name, isMissing(c, r) ? null : c.values[r]]));
  const out = new Array<string>(rows.length);
  const sameKey = new Map<string, number[]>();
  for (let k = 0; k < rows.length; k++) {
    const key = text(keys, rows[k]);
    const list = sameKey.get(key);
    if (list) list.push(k);
    else sameKey.set(key, [k]);
  }
  for (const [key, members] of sameKey) {
    if (members.length === 1) {
      out[members[0]] = key;
      continue;
    }
    const full = members.map((k) => text(all, rows[k]));
    const order = members.map((_, j) => j).sort((a, b) => (full[a] < full[b] ? -1 : full[a] > full[b] ? 1 : a - b));
    order.forEach((j, rank) => (out[members[j]] = `${key}#${rank}`));
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
