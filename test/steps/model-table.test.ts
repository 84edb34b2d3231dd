/** The model_table step called directly: the columns it keeps, the rows without a target it drops. */
import { describe, expect, it } from 'vitest';
import type { Frame } from '../../core/frame.js';
import { messages } from '../../core/messages.js';
import type { FrameOutput } from '../../core/step-types.js';
import { modelTable, type ModelTableParams } from '../../steps/model-table.js';
import { asOutput, errorOf, stepContext } from '../helpers.js';

/** y is missing in rows 1 and 3; x1 is missing in row 2 (a predictor gap, which this step keeps). */
const frame: Frame = {
  rows: 5,
  columns: [
    { name: 'note', type: 'string', values: ['p', 'q', 'r', 's', 't'] },
    { name: 'site', type: 'string', values: ['A', 'A', 'B', 'B', 'C'] },
    { name: 'x1', type: 'number', values: Float64Array.from([1, 2, NaN, 4, 5]) },
    { name: 'x2', type: 'number', values: Float64Array.from([10, 20, 30, 40, 50]) },
    { name: 'day', type: 'date', values: Float64Array.from([0, 1, 2, 3, 4]) },
    { name: 'y', type: 'number', values: Float64Array.from([0.5, NaN, 2.5, NaN, 4.5]) },
  ],
};

const PARAMS: ModelTableParams = { target: 'y', predictors: ['x1', 'x2'], groups: 'site', time: 'day' };

function run(input: Frame, params: ModelTableParams): FrameOutput {
  return modelTable.run([asOutput(input)], params, stepContext()) as FrameOutput;
}

const values = (out: FrameOutput, name: string) => Array.from(out.frame.columns.find((c) => c.name === name)!.values as ArrayLike<unknown>);

describe('model_table', () => {
  it('keeps target, predictors, groups and time in that order, and drops the rows without a target', () => {
    const out = run(frame, PARAMS);
    expect(out.frame.columns.map((c) => c.name)).toEqual(['y', 'x1', 'x2', 'site', 'day']);
    // rows 1 and 3 lack y; row 2 lacks only x1 and stays
    expect(values(out, 'y')).toEqual([0.5, 2.5, 4.5]);
    expect(values(out, 'x1')).toEqual([1, NaN, 5]);
    expect(values(out, 'site')).toEqual(['A', 'B', 'C']);
    expect(out.notes).toMatchObject({ rowsIn: 5, rowsOut: 3 });
    expect(out.notes.detail).toBe('2 rows dropped with the target y missing; kept columns y, x1, x2, site, day');
  });

  it('names a column once when groups is also a predictor, and leaves out absent groups and time', () => {
    const out = run(frame, { target: 'y', predictors: ['x2', 'site'], groups: 'site', time: null });
    expect(out.frame.columns.map((c) => c.name)).toEqual(['y', 'x2', 'site']);
    expect(out.frame.rows).toBe(3);
  });

  it('stops when no row has a target', async () => {
    const empty: Frame = { rows: 2, columns: [{ name: 'y', type: 'number', values: Float64Array.from([NaN, NaN]) }] };
    const e = await errorOf(() => run(empty, { target: 'y', predictors: [], groups: null, time: null }));
    expect([e.message, e.exitCode]).toEqual([messages.targetAllMissing('y'), 1]);
  });
});
