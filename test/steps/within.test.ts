/** The within step called directly: inclusive bounds, missing values kept, counts below and above. */
import { describe, expect, it } from 'vitest';
import type { Frame } from '../../core/frame.js';
import { messages } from '../../core/messages.js';
import type { FrameOutput } from '../../core/step-types.js';
import { within, type WithinParams } from '../../steps/within.js';
import { asOutput, stepContext } from '../helpers.js';

/** x: -5 (below 0), 0 and 10 (on the bounds), 5, a missing value, 15 (above 10). */
const frame: Frame = {
  rows: 6,
  columns: [
    { name: 'x', type: 'number', values: Float64Array.from([-5, 0, 5, 10, NaN, 15]) },
    { name: 'id', type: 'number', values: Float64Array.from([0, 1, 2, 3, 4, 5]) },
  ],
};

function run(params: WithinParams): FrameOutput {
  return within.run([asOutput(frame)], params, stepContext()) as FrameOutput;
}

const ids = (out: FrameOutput) => Array.from(out.frame.columns[1].values as Float64Array);

describe('within', () => {
  it('keeps values on the bounds and missing values, and counts those below and above', () => {
    const out = run({ column: 'x', min: 0, max: 10 });
    // -5 is below, 15 above; 0 and 10 are inside an inclusive range; the missing row 4 stays
    expect(ids(out)).toEqual([1, 2, 3, 4]);
    expect(out.notes).toMatchObject({ rowsIn: 6, rowsOut: 4 });
    expect(out.notes.detail).toBe('2 rows dropped with x outside [0, 10] (1 below, 1 above)');
  });

  it('leaves a side open when its bound is null', () => {
    const low = run({ column: 'x', min: 1, max: null });
    // below 1: -5 and 0
    expect(ids(low)).toEqual([2, 3, 4, 5]);
    expect(low.notes.detail).toBe('2 rows dropped with x outside [1, ∞] (2 below, 0 above)');
    const high = run({ column: 'x', min: null, max: 5 });
    // above 5: 10 and 15
    expect(ids(high)).toEqual([0, 1, 2, 4]);
    expect(high.notes.detail).toBe('2 rows dropped with x outside [-∞, 5] (0 below, 2 above)');
  });

  it('tells predict why a row was removed', () => {
    expect(within.recipe!.rowReason!({ column: 'x', min: 0, max: 10 }, frame, 5)).toBe('x = 15 is outside [0, 10]');
  });
});

describe('within recipe checks', () => {
  const types = new Map([
    ['x', 'number' as const],
    ['s', 'string' as const],
  ]);
  const label = 'clean[0] (within)';

  it('refuses min above max, at min', () => {
    expect(within.recipe!.check!({ column: 'x', min: 10, max: 0 }, types, label)).toEqual([{ at: ['min'], message: messages.withinInverted(label, 10, 0) }]);
  });

  it('refuses a range with neither bound, and a column that is not a number', () => {
    expect(within.recipe!.check!({ column: 's', min: null, max: null }, types, label)).toEqual([
      { at: ['column'], message: messages.schemaOther(label, 'column "s" is string, but within needs a number column') },
      { at: [], message: messages.schemaOther(label, 'gives neither min nor max; add at least one') },
    ]);
  });

  it('accepts a number column with min equal to max', () => {
    expect(within.recipe!.check!({ column: 'x', min: 3, max: 3 }, types, label)).toEqual([]);
  });
});
