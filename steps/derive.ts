import { columnFromValues, toArquero, type Frame } from '../runner/frame.js';
import type { FrameOutput, StepDefinition } from '../runner/step-types.js';

export interface DeriveParams {
  columns: Record<string, string>;
}

/**
 * Adds columns computed row by row from arquero expressions. Non-finite results (a log of zero,
 * arithmetic on a missing value) become missing and are reported as a warning with their count.
 */
export const derive: StepDefinition<DeriveParams, FrameOutput> = {
  kind: 'derive',
  version: 1,
  codec: 'frame',
  run(inputs, params, ctx) {
    const input = (inputs[0] as FrameOutput).frame;
    const table = toArquero(input).derive(params.columns);
    const frame: Frame = { rows: input.rows, columns: [...input.columns] };
    const changed: Record<string, number> = {};
    for (const name of Object.keys(params.columns)) {
      const { column, nonFinite } = columnFromValues(name, table.array(name) as ArrayLike<unknown>);
      frame.columns.push(column);
      if (nonFinite > 0) {
        changed[name] = nonFinite;
        ctx.warn(
          'derive-non-finite',
          `derived column "${name}" = ${params.columns[name]} gave ${nonFinite} non-finite values (from missing or out-of-domain inputs); they are treated as missing`,
        );
      }
    }
    return {
      frame,
      notes: {
        rowsIn: input.rows,
        rowsOut: input.rows,
        detail: `derived ${Object.entries(params.columns)
          .map(([k, v]) => `${k} = ${v}`)
          .join('; ')}`,
        changed,
      },
    };
  },
  summary: (o) => `${o.frame.columns.length} columns`,
};
