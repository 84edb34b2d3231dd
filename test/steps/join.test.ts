/** The join step called directly: partner rows, unmatched counts, repeated keys. */
import { describe, expect, it } from 'vitest';
import type { Frame } from '../../core/frame.js';
import type { FrameOutput } from '../../core/step-types.js';
import { join, type JoinParams } from '../../steps/join.js';
import { asOutput, stepContext } from '../helpers.js';

/** Main table: sites A to D with y 1 to 4. */
const main: Frame = {
  rows: 4,
  columns: [
    { name: 'site', type: 'string', values: ['A', 'B', 'C', 'D'] },
    { name: 'y', type: 'number', values: Float64Array.from([1, 2, 3, 4]) },
  ],
};

/** Other source: sites A, C and E (E has no partner in the main table), with elevation and a label. */
const sites: Frame = {
  rows: 3,
  columns: [
    { name: 'site', type: 'string', values: ['A', 'C', 'E'] },
    { name: 'elev', type: 'number', values: Float64Array.from([10, 30, 50]) },
    { name: 'label', type: 'string', values: ['a', 'c', 'e'] },
  ],
};

function run(left: Frame, right: Frame, params: JoinParams, warnings: string[] = []): FrameOutput {
  return join.run([asOutput(left), asOutput(right)], params, stepContext(warnings)) as FrameOutput;
}

const values = (out: FrameOutput, name: string) => Array.from(out.frame.columns.find((c) => c.name === name)!.values as ArrayLike<unknown>);

describe('join', () => {
  it('with keep: matched drops the rows without a partner and counts them', () => {
    // A and C are in both tables; B and D are not in "sites", so 2 rows go
    const out = run(main, sites, { with: 'sites', on: ['site'], keep: 'matched' });
    expect(out.frame.columns.map((c) => c.name)).toEqual(['site', 'y', 'elev', 'label']);
    expect(values(out, 'site')).toEqual(['A', 'C']);
    expect(values(out, 'y')).toEqual([1, 3]);
    expect(values(out, 'elev')).toEqual([10, 30]);
    expect(values(out, 'label')).toEqual(['a', 'c']);
    expect(out.notes).toMatchObject({ rowsIn: 4, rowsOut: 2, extra: { unmatched: 2 } });
    expect(out.notes.detail).toBe('2 rows had no partner in "sites" on site and were dropped');
  });

  it('with keep: all keeps every row, the other source’s columns missing where there is no partner', () => {
    const out = run(main, sites, { with: 'sites', on: ['site'], keep: 'all' });
    expect(values(out, 'y')).toEqual([1, 2, 3, 4]);
    expect(values(out, 'elev')).toEqual([10, NaN, 30, NaN]);
    expect(values(out, 'label')).toEqual(['a', null, 'c', null]);
    expect(out.notes).toMatchObject({ rowsIn: 4, rowsOut: 4, extra: { unmatched: 2 } });
    expect(out.notes.detail).toBe('2 rows had no partner in "sites" on site and were kept with its columns missing');
  });

  it('matches on every key column together', () => {
    const left: Frame = {
      rows: 3,
      columns: [
        { name: 'site', type: 'string', values: ['A', 'A', 'B'] },
        { name: 'year', type: 'number', values: Float64Array.from([2020, 2021, 2020]) },
      ],
    };
    const right: Frame = {
      rows: 2,
      columns: [
        { name: 'site', type: 'string', values: ['A', 'B'] },
        { name: 'year', type: 'number', values: Float64Array.from([2021, 2021]) },
        { name: 'rain', type: 'number', values: Float64Array.from([7, 8]) },
      ],
    };
    // only (A, 2021) is in both; (A, 2020) and (B, 2020) share one key column but not both
    const out = run(left, right, { with: 'weather', on: ['site', 'year'], keep: 'matched' });
    expect([values(out, 'site'), values(out, 'year'), values(out, 'rain')]).toEqual([['A'], [2021], [7]]);
    expect(out.notes.extra).toEqual({ unmatched: 2 });
  });

  it('repeats a main row once per partner when the other source repeats a key, and warns', () => {
    const twice: Frame = {
      rows: 3,
      columns: [
        { name: 'site', type: 'string', values: ['A', 'A', 'C'] },
        { name: 'elev', type: 'number', values: Float64Array.from([10, 11, 30]) },
      ],
    };
    const warnings: string[] = [];
    const out = run(main, twice, { with: 'sites', on: ['site'], keep: 'matched' }, warnings);
    // A has two partners (A twice), C one: 3 rows out of the 2 matched main rows
    expect(values(out, 'y')).toEqual([1, 1, 3]);
    expect(values(out, 'elev')).toEqual([10, 11, 30]);
    expect(out.notes).toMatchObject({ rowsIn: 4, rowsOut: 3, extra: { unmatched: 2 } });
    // one row of "sites" (the second A) repeats an earlier key
    expect(warnings).toHaveLength(1);
    expect(warnings[0]).toMatch(/^join-duplicate-keys: source "sites" has 1 rows whose site repeats an earlier row;/);
  });

  it('does not warn when the other source’s keys are unique, and leaves its input frames unchanged', () => {
    const warnings: string[] = [];
    run(main, sites, { with: 'sites', on: ['site'], keep: 'matched' }, warnings);
    expect(warnings).toEqual([]);
    expect(main.rows).toBe(4);
    expect(main.columns.map((c) => c.name)).toEqual(['site', 'y']);
  });

  it('never matches a missing key with a missing key (as SQL joins do), and counts the row as unmatched', () => {
    const left: Frame = { rows: 3, columns: [{ name: 'k', type: 'number', values: Float64Array.from([1, Number.NaN, 3]) }] };
    const right: Frame = {
      rows: 2,
      columns: [
        { name: 'k', type: 'number', values: Float64Array.from([Number.NaN, 3]) },
        { name: 'v', type: 'string', values: ['missing-partner', 'three'] },
      ],
    };
    const matched = run(left, right, { with: 'r', on: ['k'], keep: 'matched' });
    expect(values(matched, 'v')).toEqual(['three']);
    expect((matched.notes.extra as { unmatched?: number } | undefined)?.unmatched ?? matched.notes.rowsIn - matched.notes.rowsOut).toBe(2);
    const all = run(left, right, { with: 'r', on: ['k'], keep: 'all' });
    expect(values(all, 'v')).toEqual([null, null, 'three']);
  });
});
