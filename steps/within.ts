import { column, takeRows } from '../core/frame.js';
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
};
