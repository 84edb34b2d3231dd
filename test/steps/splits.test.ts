import { describe, expect, it } from 'vitest';
import type { Frame } from '../../core/frame.js';
import { DendrologError, messages } from '../../core/messages.js';
import { foldRows, folds, type FoldsOutput } from '../../steps/folds.js';
import { holdout, type HoldoutOutput } from '../../steps/holdout.js';
import { rowIdentities } from '../../steps/split-util.js';
import { asOutput, stepContext, NO_UNITS } from '../helpers.js';

/** 30 sites of unequal size (3 to 9 rows) with a daily date column and a numeric year. */
function sitesFrame(): Frame {
  const site: string[] = [];
  const day: number[] = [];
  for (let s = 0; s < 30; s++) {
    for (let r = 0; r < 3 + (s % 7); r++) {
      site.push(`site${s}`);
      day.push(Date.UTC(2020, 0, 1) + ((s * 13 + r * 29) % 400) * 86_400_000);
    }
  }
  return {
    rows: site.length,
    columns: [
      { name: 'site', type: 'string', values: site },
      { name: 'day', type: 'date', values: Float64Array.from(day) },
    ],
  };
}

const frame = sitesFrame();
const siteOf = (r: number) => (frame.columns[0].values as string[])[r];
const dayOf = (r: number) => (frame.columns[1].values as Float64Array)[r];

function split(by: 'random' | 'groups' | 'time', cutoff: string | null = null, gap = 0, warnings: string[] = []): HoldoutOutput {
  return holdout.run([asOutput(frame)], { target: 'y', by, fraction: 0.25, cutoff, gap, groups: 'site', time: 'day' }, stepContext(warnings)) as HoldoutOutput;
}

function makeFolds(s: HoldoutOutput, by: 'random' | 'groups' | 'time', gap = 0): FoldsOutput {
  return folds.run([asOutput(frame), s], { target: 'y', k: 4, by, gap, groups: 'site', time: 'day' }, stepContext()) as FoldsOutput;
}

describe('holdout', () => {
  it('by groups never puts one group on both sides', () => {
    const s = split('groups');
    const trainSites = new Set(s.train.map(siteOf));
    expect(s.test.some((r) => trainSites.has(siteOf(r)))).toBe(false);
    expect(s.test.length + s.train.length).toBe(frame.rows);
    expect(s.test.length).toBeGreaterThanOrEqual(Math.round(0.25 * frame.rows));
  });

  it('by time holds out only rows later than every training row', () => {
    const s = split('time');
    expect(Math.min(...s.test.map(dayOf))).toBeGreaterThan(Math.max(...s.train.map(dayOf)));
  });

  it('by time with a cutoff holds out exactly the rows at or after it', () => {
    const s = split('time', '2020-09-01');
    const cut = Date.UTC(2020, 8, 1);
    expect(s.test.every((r) => dayOf(r) >= cut)).toBe(true);
    expect(s.train.every((r) => dayOf(r) < cut)).toBe(true);
  });

  it('by time with a gap leaves the rows within the gap before the cutoff on neither side', () => {
    const s = split('time', '2020-09-01', 30);
    const cut = Date.UTC(2020, 8, 1);
    const start = cut - 30 * 86_400_000;
    const within = [...Array(frame.rows).keys()].filter((r) => dayOf(r) >= start && dayOf(r) < cut);
    expect(within.length).toBeGreaterThan(0);
    expect(s.gapRows).toBe(within.length);
    expect(s.train.every((r) => dayOf(r) < start)).toBe(true);
    expect(s.test.every((r) => dayOf(r) >= cut)).toBe(true);
    expect(s.train.length + s.test.length + s.gapRows).toBe(frame.rows);
  });

  it('by time with a gap before every training row refuses, saying to reduce the gap', () => {
    expect(() => split('time', '2020-09-01', 400)).toThrow(new DendrologError(messages.holdoutEmpty('training', 'the gap of 400 before the holdout leaves no earlier rows; reduce evaluation.holdout.gap'), 2));
  });

  it('by time with groups declared warns that groups sit on both sides', () => {
    const warnings: string[] = [];
    const s = split('time', null, 0, warnings);
    const trainSites = new Set(s.train.map(siteOf));
    const testSites = new Set(s.test.map(siteOf));
    const both = [...testSites].filter((g) => trainSites.has(g)).length;
    expect(both).toBeGreaterThan(0);
    expect(warnings).toEqual([`holdout-groups-both-sides: ${messages.holdoutGroupsBothSides('time', both, testSites.size, 'site')}`]);
    // by groups, nothing to say
    const quiet: string[] = [];
    split('groups', null, 0, quiet);
    expect(quiet).toEqual([]);
  });

  it('gives the same rows for the same seed', () => {
    expect(split('random')).toEqual(split('random'));
  });
});

describe('folds', () => {
  it('by groups: no group is tested in one fold and trained on in the same fold', () => {
    const s = split('groups');
    const f = makeFolds(s, 'groups');
    for (let k = 0; k < f.k; k++) {
      const { fit, test } = foldRows(f, k, () => NaN);
      const fitSites = new Set(fit.map((p) => siteOf(s.train[p])));
      expect(test.length).toBeGreaterThan(0);
      expect(test.some((p) => fitSites.has(siteOf(s.train[p])))).toBe(false);
    }
  });

  it('at random: every training row is tested exactly once and folds differ by at most one row', () => {
    const s = split('random');
    const f = makeFolds(s, 'random');
    const sizes = [0, 1, 2, 3].map((k) => f.fold.filter((g) => g === k).length);
    expect(sizes.reduce((a, b) => a + b)).toBe(s.train.length);
    expect(Math.max(...sizes) - Math.min(...sizes)).toBeLessThanOrEqual(1);
  });

  it('forward in time: no fold trains on a row later than its test rows, and the gap is kept', () => {
    const s = split('time');
    for (const gap of [0, 10]) {
      const f = makeFolds(s, 'time', gap);
      for (let k = 0; k < f.k; k++) {
        const { fit, test } = foldRows(f, k, (p) => dayOf(s.train[p]));
        expect(fit.length).toBeGreaterThan(0);
        expect(test.length).toBeGreaterThan(0);
        const lastFit = Math.max(...fit.map((p) => dayOf(s.train[p])));
        const firstTest = Math.min(...test.map((p) => dayOf(s.train[p])));
        expect(lastFit).toBeLessThan(firstTest - gap * 86_400_000);
      }
      // the earliest block is never tested
      expect(f.fold.filter((g) => g === -1).length).toBeGreaterThan(0);
    }
  });

  it('by groups refuses fewer groups than folds', () => {
    const few: Frame = {
      rows: 12,
      columns: [{ name: 'site', type: 'string', values: Array.from({ length: 12 }, (_, i) => `s${i % 3}`) }],
    };
    const s: HoldoutOutput = { train: [...Array(12).keys()], test: [], by: 'random', testGroups: 0, trainGroups: 3, cutoff: null, gapRows: 0, units: NO_UNITS };
    expect(() => folds.run([asOutput(few), s], { target: 'y', k: 4, by: 'groups', gap: 0, groups: 'site', time: null }, stepContext())).toThrow(
      new DendrologError(messages.foldsTooFew(3, 'groups', 0, 3, 4, 4), 1),
    );
  });
});

describe('row identities', () => {
  it('are the JSON text of the key columns’ values, by column name, for awkward values too', () => {
    // the text is what each row's draw hashes: any change to it would move rows between folds
    const values = [0.1, -0, 1e21, 1e-7, -123.456e-300, Number.MAX_VALUE, 5e-324, NaN, 42];
    const f: Frame = {
      rows: values.length,
      columns: [
        { name: 'y', type: 'number', values: Float64Array.from(values) },
        { name: 'lake "A"\\é\n', type: 'string', values: ['a', 'say "hi"', 'tab\there', 'ünï', '\u2028', null, '', '0', 'a'] },
        { name: 'day', type: 'date', values: Float64Array.from(values, (_, i) => 1_700_000_000_000 + i * 86_400_000) },
      ],
    };
    const all = [...Array(f.rows).keys()];
    const keys = ['y', 'lake "A"\\é\n', 'day'];
    const byName = [...f.columns].sort((a, b) => (a.name < b.name ? -1 : a.name > b.name ? 1 : 0));
    const reference = all.map((r) => JSON.stringify(byName.map((c) => [c.name, Number.isNaN(c.values[r] as number) || c.values[r] === null ? null : c.values[r]])));
    expect(rowIdentities(f, all, keys)).toEqual(reference);
  });
});

/**
 * Which units (sites for group splits, row identities for random ones) land on each side: the
 * holdout as `test`/`train`, and each training unit's fold.
 */
function sides(f: Frame, by: 'random' | 'groups', seed = 1) {
  const s = holdout.run([asOutput(f)], { target: 'y', by, fraction: 0.25, cutoff: null, gap: 0, groups: 'site', time: 'day' }, stepContext([], seed)) as HoldoutOutput;
  const d = folds.run([asOutput(f), s], { target: 'y', k: 4, by, gap: 0, groups: 'site', time: 'day' }, stepContext([], seed)) as FoldsOutput;
  const ids = rowIdentities(f, [...Array(f.rows).keys()], ['y', 'day']);
  const unit = (r: number) => (by === 'groups' ? (f.columns[0].values as string[])[r] : ids[r]);
  const side = new Map<string, string>();
  for (const r of s.test) side.set(unit(r), 'holdout');
  s.train.forEach((r, k) => side.set(unit(r), `fold ${d.fold[k]}`));
  return side;
}

/** The frame with its rows in another order. */
const reordered = (f: Frame, order: number[]): Frame => ({ rows: f.rows, columns: f.columns.map((c) => ({ ...c, values: Array.isArray(c.values) ? order.map((r) => (c.values as string[])[r]) : Float64Array.from(order, (r) => (c.values as Float64Array)[r]) })) });

/** Units whose side differs between two assignments, among those in both. */
const moved = (a: Map<string, string>, b: Map<string, string>) => [...a].filter(([u, side]) => b.has(u) && b.get(u) !== side).map(([u]) => u);

describe('a unit’s side (holdout or fold) follows from the seed and the unit alone', () => {
  const reversed = reordered(frame, [...Array(frame.rows).keys()].reverse());
  // one day edited in site 4's first row
  const edited: Frame = { ...frame, columns: frame.columns.map((c) => (c.name === 'day' ? { ...c, values: (c.values as Float64Array).map((v, r) => (siteOf(r) === 'site4' && r === (frame.columns[0].values as string[]).indexOf('site4') ? v + 86_400_000 : v)) } : c)) };

  it('by groups: reordering rows or editing a value moves no group', () => {
    const base = sides(frame, 'groups');
    expect(sides(reversed, 'groups')).toEqual(base);
    expect(sides(edited, 'groups')).toEqual(base);
    // and another seed does draw another split
    expect(moved(base, sides(frame, 'groups', 2)).length).toBeGreaterThan(0);
  });

  it('at random: reordering rows moves no row; editing one row moves at most one other row per boundary', () => {
    const base = sides(frame, 'random');
    expect(sides(reversed, 'random')).toEqual(base);
    const after = sides(edited, 'random');
    // the edited row is a new unit (rows are known by their values): one unit left, one came, so
    // each of the four boundaries (holdout, three between folds) shifts by at most one row
    expect([...after.keys()].filter((u) => !base.has(u))).toHaveLength(1);
    expect(moved(base, after).length).toBeLessThanOrEqual(4);
  });

  it('at random: a value outside the target and time (a predictor) can change without moving any row', () => {
    // rows are known by target and time; the site of a row whose day no other row shares is like a predictor here
    const days = frame.columns[1].values as Float64Array;
    const lone = [...Array(frame.rows).keys()].find((r) => days.filter((d) => d === days[r]).length === 1)!;
    const renamed: Frame = { ...frame, columns: frame.columns.map((c) => (c.name === 'site' ? { ...c, values: (c.values as string[]).map((v, r) => (r === lone ? 'elsewhere' : v)) } : c)) };
    expect(sides(renamed, 'random')).toEqual(sides(frame, 'random'));
  });

  it('by groups: a new group moves at most the few groups its rows push across a boundary', () => {
    const base = sides(frame, 'groups');
    const sizes = [...Array(30).keys()].map((s) => 3 + (s % 7));
    for (let n = 0; n < 12; n++) {
      const size = 3 + (n % 7);
      const grown: Frame = {
        rows: frame.rows + size,
        columns: [
          { name: 'site', type: 'string', values: [...(frame.columns[0].values as string[]), ...Array<string>(size).fill(`new${n}`)] },
          { name: 'day', type: 'date', values: Float64Array.from([...(frame.columns[1].values as Float64Array), ...Array<number>(size).fill(Date.UTC(2020, 5, 1))]) },
        ],
      };
      // a boundary moves by the new group's rows: the groups covering that many rows, plus one
      // partly across, can change side; the holdout has one boundary, the 4 folds three more
      const perBoundary = Math.ceil(size / Math.min(...sizes)) + 1;
      expect(moved(base, sides(grown, 'groups')).length, `new${n}`).toBeLessThanOrEqual(4 * perBoundary);
    }
  });
});

describe('a declared row_key', () => {
  // the sites frame with a target: row r's y is r / 10
  const withY = (f: Frame, edit: (r: number) => number = (r) => r / 10): Frame => ({ ...f, columns: [...f.columns, { name: 'y', type: 'number', values: Float64Array.from({ length: f.rows }, (_, r) => edit(r)) }] });
  const randomSides = (f: Frame, rowKey?: string[], warnings: string[] = []) => {
    const s = holdout.run([asOutput(f)], { target: 'y', by: 'random', fraction: 0.25, cutoff: null, gap: 0, groups: 'site', time: 'day', ...(rowKey ? { rowKey } : {}) }, stepContext(warnings)) as HoldoutOutput;
    const d = folds.run([asOutput(f), s], { target: 'y', k: 4, by: 'random', gap: 0, groups: 'site', time: 'day', ...(rowKey ? { rowKey } : {}) }, stepContext()) as FoldsOutput;
    const side = new Array<string>(f.rows);
    for (const r of s.test) side[r] = 'holdout';
    s.train.forEach((r, k) => (side[r] = `fold ${d.fold[k]}`));
    return side;
  };

  it('keeps every row on its side when a measured value is corrected, which the target-and-time identity cannot', () => {
    const corrected = withY(frame, (r) => (r === 5 ? 99 : r / 10));
    expect(randomSides(corrected, ['site', 'day'])).toEqual(randomSides(withY(frame), ['site', 'day']));
    // without the key, the corrected row is a new unit, drawn afresh (with this seed it lands elsewhere)
    const before = randomSides(withY(frame));
    const after = randomSides(corrected);
    expect(after.filter((side, r) => side !== before[r]).length).toBeGreaterThan(0);
  });

  it('warns when rows share their key, naming the key and how many rows', () => {
    const warnings: string[] = [];
    randomSides(withY(frame), ['site'], warnings);
    expect(warnings).toEqual([`row-key-not-unique: ${messages.rowKeyNotUnique(['site'], frame.rows)}`]);
  });
});
