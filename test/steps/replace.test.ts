/** The replace step called directly: which values change, and the count per column. */
import { describe, expect, it } from 'vitest';
import type { Frame } from '../../core/frame.js';
import type { FrameOutput } from '../../core/step-types.js';
import { replace, type ReplaceParams } from '../../steps/replace.js';
import { asOutput, stepContext } from '../helpers.js';

/** x and z hold the sentinel -9999 (z is never listed, so it keeps it); code is text with "NA" and "-9999". */
function frame(): Frame {
  return {
    rows: 4,
    columns: [
      { name: 'x', type: 'number', values: Float64Array.from([-9999, 1, -9999, NaN]) },
      { name: 'z', type: 'number', values: Float64Array.from([5, -9999, 5, 5]) },
      { name: 'code', type: 'string', values: ['NA', 'a', '-9999', null] },
    ],
  };
}

function run(input: Frame, params: ReplaceParams): FrameOutput {
  return replace.run([asOutput(input)], params, stepContext()) as FrameOutput;
}

const values = (out: FrameOutput, name: string) => Array.from(out.frame.columns.find((c) => c.name === name)!.values as ArrayLike<unknown>);

describe('replace', () => {
  it('sets each listed value to missing in the listed columns only, counting each change per column', () => {
    const out = run(frame(), { columns: ['x', 'code'], values: [-9999, 'NA'], with: 'missing' });
    // x: rows 0 and 2 hold -9999 (the text "NA" is no number, so it matches nothing here)
    expect(values(out, 'x')).toEqual([NaN, 1, NaN, NaN]);
    // code: "NA" (row 0) and the text form of -9999 (row 2); a missing value stays missing, uncounted
    expect(values(out, 'code')).toEqual([null, 'a', null, null]);
    // z is not listed: its sentinel stays
    expect(values(out, 'z')).toEqual([5, -9999, 5, 5]);
    expect({ ...out.notes.changed }).toEqual({ x: 2, code: 2 });
    expect(out.notes).toMatchObject({ rowsIn: 4, rowsOut: 4 });
    expect(out.notes.detail).toBe('4 values equal to -9999, NA set to missing (x: 2, code: 2)');
    expect(replace.summary!(out)).toBe('4 values replaced');
  });

  it('sets them to a number, written as text in text columns', () => {
    const out = run(frame(), { columns: ['x', 'z', 'code'], values: [-9999], with: 0 });
    expect(values(out, 'x')).toEqual([0, 1, 0, NaN]);
    expect(values(out, 'z')).toEqual([5, 0, 5, 5]);
    expect(values(out, 'code')).toEqual(['NA', 'a', '0', null]);
    // x: 2, z: 1, code: 1
    expect({ ...out.notes.changed }).toEqual({ x: 2, z: 1, code: 1 });
    expect(out.notes.detail).toBe('4 values equal to -9999 set to 0 (x: 2, z: 1, code: 1)');
  });

  it('matches a number given as text in a number column, and counts 0 for a listed column without it', () => {
    const out = run(frame(), { columns: ['x', 'z'], values: ['-9999'], with: 'missing' });
    expect(values(out, 'x')).toEqual([NaN, 1, NaN, NaN]);
    const noSentinel = run(frame(), { columns: ['x'], values: [12345], with: 'missing' });
    expect({ ...noSentinel.notes.changed }).toEqual({ x: 0 });
    expect(values(noSentinel, 'x')).toEqual([-9999, 1, -9999, NaN]);
  });

  it('leaves its input frame unchanged', () => {
    const input = frame();
    run(input, { columns: ['x', 'code'], values: [-9999, 'NA'], with: 'missing' });
    expect(Array.from(input.columns[0].values as Float64Array)).toEqual([-9999, 1, -9999, NaN]);
    expect(input.columns[2].values).toEqual(['NA', 'a', '-9999', null]);
  });
});
