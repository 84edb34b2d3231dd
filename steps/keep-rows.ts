import * as aq from 'arquero';
import { takeRows, toArquero } from '../runner/frame.js';
import type { FrameOutput, StepDefinition } from '../runner/step-types.js';

export interface KeepRowsParams {
  expr: string;
}

/** Keeps the rows for which an arquero expression is true; rows where it is false or missing are dropped. */
export const keepRows: StepDefinition<KeepRowsParams, FrameOutput> = {
  kind: 'keep_rows',
  version: 1,
  codec: 'frame',
  run(inputs, params) {
    const input = (inputs[0] as FrameOutput).frame;
    const flagged = toArquero(input)
      .derive({ __row: () => aq.op.row_number() - 1, __keep: params.expr })
      .filter((d: Record<string, unknown>) => d.__keep === true)
      .array('__row') as ArrayLike<number>;
    const frame = takeRows(input, Array.from(flagged));
    return {
      frame,
      notes: {
        rowsIn: input.rows,
        rowsOut: frame.rows,
        detail: `${input.rows - frame.rows} rows dropped where ${JSON.stringify(params.expr)} is not true`,
      },
    };
  },
  summary: (o) => `${o.notes.rowsIn - o.notes.rowsOut} rows dropped`,
};
