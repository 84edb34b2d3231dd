import { column, isMissing, takeRows } from '../core/frame.js';
import type { FrameOutput, StepDefinition } from '../core/step-types.js';
import { dict } from '../core/dict.js';

export interface DropMissingParams {
  columns: string[];
}

/** Drops rows missing a value in any listed column, counting the rows each column removed first. */
export const dropMissing: StepDefinition<DropMissingParams, FrameOutput> = {
  kind: 'drop_missing',
  version: 1,
  codec: 'frame',
  run(inputs, params) {
    const input = (inputs[0] as FrameOutput).frame;
    const cols = params.columns.map((n) => column(input, n));
    const keep: number[] = [];
    const byColumn = dict<number>();
    for (let i = 0; i < input.rows; i++) {
      const gone = cols.find((c) => isMissing(c, i));
      if (gone) byColumn[gone.name] = (byColumn[gone.name] ?? 0) + 1;
      else keep.push(i);
    }
    const frame = takeRows(input, keep);
    const dropped = input.rows - frame.rows;
    const parts = Object.entries(byColumn).map(([k, v]) => `${k}: ${v}`);
    return {
      frame,
      notes: {
        rowsIn: input.rows,
        rowsOut: frame.rows,
        detail: `${dropped} rows dropped for a missing ${params.columns.join(' or ')}${parts.length > 1 ? ` (${parts.join(', ')})` : ''}`,
      },
    };
  },
  summary: (o) => `${o.notes.rowsIn - o.notes.rowsOut} rows dropped`,
  recipe: {
    section: 'clean',
    schema: {
      $ref: '#/definitions/columnList',
      description: 'Columns that must hold a value: a row missing any of them is dropped. The report counts the rows each column removed.',
    },
    normalize: (v) => ({ columns: (v as string[]).map(String) }),
    shape: (p) => p.columns,
    reads: (p) => p.columns.map((c, k) => ({ column: c, at: [k] })),
    without: (p, absent) => {
      const columns = p.columns.filter((c) => !absent.has(c));
      return columns.length ? { columns } : null;
    },
    rowReason: (p, frame, row) => `${p.columns.find((c) => isMissing(column(frame, c), row)) ?? p.columns.join(' or ')} is missing`,
  },
};
