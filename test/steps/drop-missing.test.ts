/** The drop_missing step called directly: which rows stay, and the count each column removed. */
import { describe, expect, it } from 'vitest';
import type { Frame } from '../../core/frame.js';
import type { FrameOutput } from '../../core/step-types.js';
import { dropMissing } from '../../steps/drop-missing.js';
import { asOutput, stepContext } from '../helpers.js';

/** Row 1 lacks a, row 2 lacks b, row 3 lacks both, row 4 lacks only the date d; rows 0 and 5 are complete. */
const frame: Frame = {
  rows: 6,
  columns: [
    { name: 'a', type: 'number', values: Float64Array.from([1, NaN, 3, NaN, 5, 6]) },
    { name: 'b', type: 'string', values: ['x', 'y', null, null, 'z', 'w'] },
    { name: 'd', type: 'date', values: Float64Array.from([0, 0, 0, 0, NaN, 0]) },
    { name: 'id', type: 'number', values: Float64Array.from([0, 1, 2, 3, 4, 5]) },
  ],
};

function run(columns: string[]): FrameOutput {
  return dropMissing.run([asOutput(frame)], { columns }, stepContext()) as FrameOutput;
}

const ids = (out: FrameOutput) => Array.from(out.frame.columns[3].values as Float64Array);

describe('drop_missing', () => {
  it('keeps only rows with every listed column present, counting each dropped row under the first listed column it lacks', () => {
    const out = run(['a', 'b']);
    // rows 1, 2, 3 go; row 3 lacks both and is counted under a, listed first: a 2, b 1
    expect(ids(out)).toEqual([0, 4, 5]);
    expect(out.notes).toMatchObject({ rowsIn: 6, rowsOut: 3 });
    expect(out.notes.detail).toBe('3 rows dropped for a missing a or b (a: 2, b: 1)');
    expect(dropMissing.summary!(out)).toBe('3 rows dropped');
  });

  it('counts a row missing in several columns under the one listed first', () => {
    // listing b first moves row 3 to b: a 1 (row 1), b 2 (rows 2 and 3)
    expect(run(['b', 'a']).notes.detail).toBe('3 rows dropped for a missing b or a (a: 1, b: 2)');
  });

  it('treats a missing date as missing, and gives no breakdown for one column', () => {
    const out = run(['d']);
    expect(ids(out)).toEqual([0, 1, 2, 3, 5]);
    expect(out.notes.detail).toBe('1 rows dropped for a missing d');
  });

  it('drops nothing from a complete column, keeping every column', () => {
    const out = run(['id']);
    expect(ids(out)).toEqual([0, 1, 2, 3, 4, 5]);
    expect(out.frame.columns.map((c) => c.name)).toEqual(['a', 'b', 'd', 'id']);
    expect(out.notes.detail).toBe('0 rows dropped for a missing id');
  });

  it('tells predict which listed column a removed row lacked', () => {
    const contract = dropMissing.recipe!;
    expect(contract.rowReason!({ columns: ['a', 'b'] }, frame, 2)).toBe('b is missing');
    expect(contract.rowReason!({ columns: ['a', 'b'] }, frame, 3)).toBe('a is missing');
    // without the columns a new file lacks; nothing left to apply → null
    expect(contract.without!({ columns: ['a', 'b'] }, new Set(['b']))).toEqual({ columns: ['a'] });
    expect(contract.without!({ columns: ['a'] }, new Set(['a']))).toBeNull();
  });
});
