import { column, isMissing, takeRows, type Frame } from '../core/frame.js';
import { DendrologError, messages } from '../core/messages.js';
import type { FrameOutput, StepDefinition } from '../core/step-types.js';

export interface ModelTableParams {
  target: string;
  predictors: string[];
  groups: string | null;
  time: string | null;
}

/**
 * Narrows the cleaned table to the modelling columns (target, predictors, groups, time) and drops
 * rows whose target is missing, counting them: a row without a target can be neither fitted nor scored.
 */
export const modelTable: StepDefinition<ModelTableParams, FrameOutput> = {
  kind: 'model_table',
  version: 1,
  codec: 'frame',
  run(inputs, params) {
    const input = (inputs[0] as FrameOutput).frame;
    const names = [...new Set([params.target, ...params.predictors, params.groups, params.time].filter((n): n is string => !!n))];
    const narrowed: Frame = { rows: input.rows, columns: names.map((n) => column(input, n)) };
    const target = column(narrowed, params.target);
    const keep: number[] = [];
    for (let i = 0; i < narrowed.rows; i++) if (!isMissing(target, i)) keep.push(i);
    if (keep.length === 0) throw new DendrologError(messages.targetAllMissing(params.target), 1);
    const frame = takeRows(narrowed, keep);
    return {
      frame,
      notes: {
        rowsIn: input.rows,
        rowsOut: frame.rows,
        detail: `${input.rows - frame.rows} rows dropped with the target ${params.target} missing; kept columns ${names.join(', ')}`,
      },
    };
  },
  summary: (o) => `${o.frame.rows.toLocaleString('en')} rows`,
};
