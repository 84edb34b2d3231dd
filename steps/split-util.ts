import { column, type Frame } from '../runner/frame.js';

/** Row indices of each group, groups in order of first appearance. */
export function rowsByGroup(frame: Frame, groups: string, rows?: ArrayLike<number>): Map<string, number[]> {
  const values = column(frame, groups).values;
  const out = new Map<string, number[]>();
  const n = rows ? rows.length : frame.rows;
  for (let k = 0; k < n; k++) {
    const i = rows ? rows[k] : k;
    const g = String(values[i]);
    const list = out.get(g);
    if (list) list.push(i);
    else out.set(g, [i]);
  }
  return out;
}
