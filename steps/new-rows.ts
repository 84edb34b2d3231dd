import type { Column, Frame } from '../core/frame.js';
import type { ColumnType } from '../core/recipe-types.js';
import type { FrameOutput, StepDefinition } from '../core/step-types.js';

/** Hidden column that follows each new row through the data steps, so every row can be accounted for. */
export const ROW_COLUMN = '__dendrolog_row';

export interface NewRowsParams {
  /** Declared columns of the main source the new file lacks, with their types: filled as missing. */
  absent: [string, ColumnType][];
}

/**
 * The first step after reading a file to predict for (planned only by `predict`): adds the declared
 * columns the file lacks (the target, or columns nothing uses) as missing values, and numbers the
 * rows in a hidden column, so that rows the later steps remove can each be given their reason.
 *
 * Example: a 3-row file without `chl` gets `chl` = missing ×3 and `__dendrolog_row` = 0, 1, 2.
 */
export const newRows: StepDefinition<NewRowsParams, FrameOutput> = {
  kind: 'new_rows',
  version: 1,
  codec: 'frame',
  run(inputs, params) {
    const input = inputs[0] as FrameOutput;
    const n = input.frame.rows;
    const missing = params.absent.map(
      ([name, type]): Column =>
        type === 'number' || type === 'date' ? { name, type, values: new Float64Array(n).fill(NaN) } : ({ name, type, values: new Array<string | null>(n).fill(null) } as Column),
    );
    const row: Column = { name: ROW_COLUMN, type: 'number', values: Float64Array.from({ length: n }, (_, i) => i) };
    const frame: Frame = { rows: n, columns: [...input.frame.columns, ...missing, row] };
    return { frame, notes: { ...input.notes, rowsIn: n, rowsOut: n, detail: `${n} rows to predict for` } };
  },
  summary: (o) => `${o.frame.rows.toLocaleString('en')} rows`,
};
