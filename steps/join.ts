import { column, isMissing, takeRows, type Column, type Frame } from '../core/frame.js';
import { messages } from '../core/messages.js';
import type { FrameOutput, StepDefinition } from '../core/step-types.js';

export interface JoinParams {
  with: string;
  on: string[];
  keep: 'matched' | 'all';
}

/**
 * Joins the main table with another source on key columns. `keep: matched` drops rows without a
 * partner; `keep: all` keeps them with the other source's columns missing. Either way the rows that
 * found no partner are counted.
 */
export const join: StepDefinition<JoinParams, FrameOutput> = {
  kind: 'join',
  version: 1,
  codec: 'frame',
  run(inputs, params, ctx) {
    const left = (inputs[0] as FrameOutput).frame;
    const right = (inputs[1] as FrameOutput).frame;
    // a row missing any key value has no key: missing never equals missing, so it finds no partner
    // (as in SQL), and a right-hand row without a key is no one's partner
    const keyOf = (f: Frame) => {
      const cols = params.on.map((n) => column(f, n));
      return (i: number): string | null => (cols.some((c) => isMissing(c, i)) ? null : JSON.stringify(cols.map((c) => c.values[i])));
    };
    const rightKey = keyOf(right);
    const index = new Map<string, number[]>();
    let duplicated = 0;
    for (let i = 0; i < right.rows; i++) {
      const k = rightKey(i);
      if (k === null) continue;
      const list = index.get(k);
      if (list) {
        list.push(i);
        duplicated++;
      } else index.set(k, [i]);
    }
    if (duplicated > 0) {
      ctx.warn('join-duplicate-keys', messages.joinDuplicateKeys(params.with, duplicated, params.on));
    }
    const leftKey = keyOf(left);
    const leftRows: number[] = [];
    const rightRows: number[] = [];
    let unmatched = 0;
    for (let i = 0; i < left.rows; i++) {
      const key = leftKey(i);
      const partners = key === null ? undefined : index.get(key);
      if (!partners) {
        unmatched++;
        if (params.keep === 'all') {
          leftRows.push(i);
          rightRows.push(-1);
        }
        continue;
      }
      for (const j of partners) {
        leftRows.push(i);
        rightRows.push(j);
      }
    }
    const l = takeRows(left, leftRows);
    const added: Column[] = right.columns
      .filter((c) => !params.on.includes(c.name))
      .map((c) => {
        if (c.values instanceof Float64Array) {
          const out = new Float64Array(rightRows.length);
          for (let i = 0; i < out.length; i++) out[i] = rightRows[i] < 0 ? NaN : c.values[rightRows[i]];
          return { ...c, values: out };
        }
        const src = c.values;
        return { ...c, values: rightRows.map((j) => (j < 0 ? null : src[j])) };
      });
    const frame: Frame = { rows: l.rows, columns: [...l.columns, ...added] };
    const what =
      params.keep === 'matched'
        ? `${unmatched} rows had no partner in "${params.with}" on ${params.on.join(', ')} and were dropped`
        : `${unmatched} rows had no partner in "${params.with}" on ${params.on.join(', ')} and were kept with its columns missing`;
    return { frame, notes: { rowsIn: left.rows, rowsOut: frame.rows, detail: what, extra: { unmatched } } };
  },
  summary: (o) => `${o.frame.rows.toLocaleString('en')} rows`,
};
