import { column, isMissing, takeRows, type Frame } from '../core/frame.js';
import { DendrologError, messages } from '../core/messages.js';
import type { FrameOutput, StepDefinition } from '../core/step-types.js';
import type { Blocks } from '../core/recipe-types.js';
import { BLOCK_COLUMN, blockName } from './split-util.js';

export interface ModelTableParams {
  target: string;
  predictors: string[];
  groups: string | null;
  time: string | null;
  /** The recipe's row_key columns, kept so splits can know rows by them; absent when not declared. */
  rowKey?: string[];
  /** Spatial blocks: the coordinates are kept and each row's block added (BLOCK_COLUMN); absent when the recipe declares none. */
  blocks?: Blocks;
}

/**
 * Narrows the cleaned table to the modelling columns (target, predictors, groups, time, block
 * coordinates) and drops rows whose target is missing, counting them: a row without a target can
 * be neither fitted nor scored. With spatial blocks, each row's block is added as a column.
 */
export const modelTable: StepDefinition<ModelTableParams, FrameOutput> = {
  kind: 'model_table',
  version: 1,
  codec: 'frame',
  run(inputs, params) {
    const input = (inputs[0] as FrameOutput).frame;
    const b = params.blocks;
    const names = [...new Set([params.target, ...params.predictors, params.groups, params.time, ...(params.rowKey ?? []), b?.x, b?.y].filter((n): n is string => !!n))];
    const narrowed: Frame = { rows: input.rows, columns: names.map((n) => column(input, n)) };
    const target = column(narrowed, params.target);
    const keep: number[] = [];
    for (let i = 0; i < narrowed.rows; i++) if (!isMissing(target, i)) keep.push(i);
    if (keep.length === 0) throw new DendrologError(messages.targetAllMissing(params.target), 1);
    const kept = takeRows(narrowed, keep);
    const frame = b ? withBlocks(kept, b) : kept;
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

/** The table with each row's spatial block as a string column; stops when a row has no coordinate. */
function withBlocks(frame: Frame, b: Blocks): Frame {
  const [x, y] = [b.x, b.y].map((c) => {
    const values = column(frame, c).values as Float64Array;
    let bad = 0;
    for (const v of values) if (!Number.isFinite(v)) bad++;
    if (bad > 0) throw new DendrologError(messages.blockCoordinateMissing(c, bad), 1);
    return values;
  });
  const names = Array.from(x, (v, i) => blockName(v, y[i], b.size));
  return { rows: frame.rows, columns: [...frame.columns, { name: BLOCK_COLUMN, type: 'string', values: names }] };
}
