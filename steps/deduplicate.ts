import { column, isMissing, takeRows, type Frame } from '../core/frame.js';
import { listedColumns, type FrameOutput, type StepDefinition } from '../core/step-types.js';

export interface DeduplicateParams {
  /** Key columns: rows equal on all of them are duplicates of each other. */
  columns: string[];
  /** Which row of a set of duplicates stays: the first, the last, or none of them. */
  keep: 'first' | 'last' | 'none';
}

/**
 * Drops rows that repeat an earlier (or later) row on key columns, such as a sample entered twice.
 * A missing key value counts as a value of its own, so two rows missing the same key column are
 * duplicates. With `keep: none` every row of a repeated key goes, for when no copy can be trusted.
 *
 * Example: keys [site, day] over rows (A, 1), (A, 1), (B, 1) keep rows 0 and 2 with `keep: first`.
 */
export const deduplicate: StepDefinition<DeduplicateParams, FrameOutput> = {
  kind: 'deduplicate',
  version: 1,
  codec: 'frame',
  run(inputs, params) {
    const input = (inputs[0] as FrameOutput).frame;
    const groups = rowsByKey(input, params.columns);
    const keep: number[] = [];
    let repeated = 0;
    for (const rows of groups.values()) {
      if (rows.length > 1) repeated++;
      if (rows.length === 1) keep.push(rows[0]);
      else if (params.keep === 'first') keep.push(rows[0]);
      else if (params.keep === 'last') keep.push(rows[rows.length - 1]);
    }
    keep.sort((a, b) => a - b);
    const frame = takeRows(input, keep);
    const dropped = input.rows - frame.rows;
    return {
      frame,
      notes: {
        rowsIn: input.rows,
        rowsOut: frame.rows,
        detail: `${dropped} rows dropped: ${repeated} values of ${params.columns.join(', ')} appear more than once (kept ${params.keep === 'none' ? 'none of them' : `the ${params.keep} of each`})`,
      },
    };
  },
  summary: (o) => `${o.notes.rowsIn - o.notes.rowsOut} rows dropped`,
  recipe: {
    section: 'clean',
    schema: {
      type: 'object',
      additionalProperties: false,
      required: ['columns'],
      description: 'Drops rows that repeat another row\'s values in the key columns, such as a sample entered twice. A missing key value counts as a value of its own.',
      properties: {
        columns: { $ref: '#/definitions/columnList', description: 'The key columns: rows equal in all of them are duplicates of each other.' },
        keep: {
          enum: ['first', 'last', 'none'],
          description: 'Which row of each set of duplicates stays: first (default), last, or none when no copy can be trusted.',
        },
      },
    },
    normalize: (v) => {
      const r = v as { columns: string[]; keep?: DeduplicateParams['keep'] };
      return { columns: r.columns.map(String), keep: r.keep ?? 'first' };
    },
    shape: (p) => ({ columns: p.columns, keep: p.keep }),
    reads: (p) => listedColumns(p.columns),
    // without a key column there is no telling duplicates apart: the step is left out
    without: (p, absent) => (p.columns.some((c) => absent.has(c)) ? null : p),
    rowReason: (p) =>
      p.keep === 'none' ? `its ${p.columns.join(', ')} repeats in another row` : `a row with the same ${p.columns.join(', ')} was kept (keep: ${p.keep})`,
  },
};

/** Rows by their key (the key columns' values, missing as its own value), in order of first appearance. */
function rowsByKey(frame: Frame, columns: string[]): Map<string, number[]> {
  const cols = columns.map((c) => column(frame, c));
  const out = new Map<string, number[]>();
  for (let i = 0; i < frame.rows; i++) {
    // JSON keeps "1" and 1 and null apart, and no value can run into the next
    const key = JSON.stringify(cols.map((c) => (isMissing(c, i) ? null : c.values[i])));
    const list = out.get(key);
    if (list) list.push(i);
    else out.set(key, [i]);
  }
  return out;
}
