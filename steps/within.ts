import { column, takeRows } from '../core/frame.js';
import { messages } from '../core/messages.js';
import type { FrameOutput, StepDefinition } from '../core/step-types.js';

export interface WithinParams {
  column: string;
  min: number | null;
  max: number | null;
}

/**
 * Drops rows whose value lies outside [min, max], counting those below and above. Missing values
 * are kept (drop them with drop_missing), so this step never hides a missing-value count.
 */
export const within: StepDefinition<WithinParams, FrameOutput> = {
  kind: 'within',
  version: 1,
  codec: 'frame',
  run(inputs, params) {
    const input = (inputs[0] as FrameOutput).frame;
    const values = column(input, params.column).values as Float64Array;
    const keep: number[] = [];
    let below = 0;
    let above = 0;
    for (let i = 0; i < input.rows; i++) {
      const v = values[i];
      if (params.min !== null && v < params.min) below++;
      else if (params.max !== null && v > params.max) above++;
      else keep.push(i);
    }
    const frame = takeRows(input, keep);
    const range = `[${params.min ?? '-∞'}, ${params.max ?? '∞'}]`;
    return {
      frame,
      notes: {
        rowsIn: input.rows,
        rowsOut: frame.rows,
        detail: `${below + above} rows dropped with ${params.column} outside ${range} (${below} below, ${above} above)`,
      },
    };
  },
  summary: (o) => `${o.notes.rowsIn - o.notes.rowsOut} rows dropped`,
  recipe: {
    section: 'clean',
    schema: {
      type: 'object',
      additionalProperties: false,
      required: ['column'],
      description: 'Drops rows whose value in a number column lies outside [min, max], counting those below and above; give min, max or both. Missing values are kept.',
      properties: {
        column: { $ref: '#/definitions/columnName', description: 'The number column whose values are checked.' },
        min: { type: 'number', description: 'Smallest value kept (inclusive); without it there is no lower bound.' },
        max: { type: 'number', description: 'Largest value kept (inclusive); without it there is no upper bound.' },
      },
    },
    normalize: (v) => {
      const r = v as { column: string; min?: number; max?: number };
      return { column: r.column, min: r.min ?? null, max: r.max ?? null };
    },
    shape: (p) => ({ column: p.column, ...(p.min === null ? {} : { min: p.min }), ...(p.max === null ? {} : { max: p.max }) }),
    reads: (p) => [{ column: p.column, at: ['column'] }],
    check(p, types, label) {
      const out: { at: (string | number)[]; message: string }[] = [];
      const type = types.get(p.column);
      if (type !== undefined && type !== 'number') {
        out.push({ at: ['column'], message: messages.schemaOther(label, `column "${p.column}" is ${type}, but within needs a number column`) });
      }
      if (p.min === null && p.max === null) out.push({ at: [], message: messages.schemaOther(label, 'gives neither min nor max; add at least one') });
      if (p.min !== null && p.max !== null && p.min > p.max) out.push({ at: ['min'], message: messages.withinInverted(label, p.min, p.max) });
      return out;
    },
    without: (p, absent) => (absent.has(p.column) ? null : p),
    rowReason: (p, frame, row) => `${p.column} = ${(column(frame, p.column).values as Float64Array)[row]} is outside [${p.min ?? '-∞'}, ${p.max ?? '∞'}]`,
  },
};
