/** The keep_rows step called directly: true keeps, false and missing drop, anything else is refused. */
import { describe, expect, it } from 'vitest';
import type { Frame } from '../../core/frame.js';
import { DendrologError, messages } from '../../core/messages.js';
import type { FrameOutput } from '../../core/step-types.js';
import { keepRows } from '../../steps/keep-rows.js';
import { asOutput, stepContext } from '../helpers.js';

/** x: 1, 5, missing, 9; s: a, b, c, missing. */
const frame: Frame = {
  rows: 4,
  columns: [
    { name: 'x', type: 'number', values: Float64Array.from([1, 5, NaN, 9]) },
    { name: 's', type: 'string', values: ['a', 'b', 'c', null] },
    { name: 'id', type: 'number', values: Float64Array.from([0, 1, 2, 3]) },
  ],
};

const run = (expr: string) => keepRows.run([asOutput(frame)], { expr }, stepContext()) as FrameOutput;
const ids = (out: FrameOutput) => Array.from(out.frame.columns[2].values as Float64Array);

describe('keep_rows', () => {
  it('keeps the rows where the condition is true; a missing input makes the condition unknown, so the row goes', () => {
    const out = run('d.x > 2');
    // 1 > 2 false; 5 true; missing unknown; 9 true
    expect(ids(out)).toEqual([1, 3]);
    expect(out.notes).toMatchObject({ rowsIn: 4, rowsOut: 2, detail: '2 rows dropped where "d.x > 2" is not true' });
  });

  it('works on text columns', () => {
    expect(ids(run("d.s !== 'b'"))).toEqual([0, 2]);
  });

  it('refuses a condition that gives something other than true, false or missing, counting the rows', () => {
    let e: unknown;
    try {
      run('d.x * 2');
    } catch (err) {
      e = err;
    }
    expect(e).toBeInstanceOf(DendrologError);
    expect((e as DendrologError).exitCode).toBe(1);
    expect((e as DendrologError).message).toBe(messages.keepRowsNotBoolean('keep_rows', 'd.x * 2', '2 (a number) at row 1 of the table reaching this step', 3, 4));
  });

  it('tells predict which rows it removed and why, and is left out when the file lacks a column it reads', () => {
    const c = keepRows.recipe!;
    expect(c.rowReason!({ expr: 'd.x > 2' }, frame, 0)).toBe('"d.x > 2" is not true');
    expect(c.without!({ expr: 'd.x > 2' }, new Set(['x']))).toBeNull();
    expect(c.without!({ expr: 'd.x > 2' }, new Set(['y']))).toEqual({ expr: 'd.x > 2' });
    expect(c.reads({ expr: "d.x > 2 && d.s === 'a'" }).map((r) => r.column)).toEqual(['x', 's']);
  });
});
