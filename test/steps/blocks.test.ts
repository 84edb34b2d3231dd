/**
 * Spatial blocks: a row's block follows from its coordinates and the block size alone, and holdouts
 * and folds by blocks never split a block (the practice of blocked cross-validation for spatially
 * correlated data: Roberts et al. 2017, Ecography 40(8); Valavi et al. 2019, Methods Ecol. Evol. 10(2)).
 */
import seedrandom from 'seedrandom';
import { describe, expect, it } from 'vitest';
import { column, type Frame } from '../../core/frame.js';
import { messages } from '../../core/messages.js';
import { folds, type FoldsOutput } from '../../steps/folds.js';
import { holdout, type HoldoutOutput } from '../../steps/holdout.js';
import { modelTable } from '../../steps/model-table.js';
import { BLOCK_COLUMN, blockName } from '../../steps/split-util.js';
import { asOutput, errorOf, stepContext } from '../helpers.js';

/** `n` rows at places in [0, 100)² in metres, with a target; rows in the order given by `order`. */
function placed(n: number, seed: string): Frame {
  const rng = seedrandom(seed);
  const x = Float64Array.from({ length: n }, () => rng() * 100);
  const y = Float64Array.from({ length: n }, () => rng() * 100);
  return {
    rows: n,
    columns: [
      { name: 'east', type: 'number', values: x },
      { name: 'north', type: 'number', values: y },
      { name: 'v', type: 'number', values: Float64Array.from(x, (e, i) => e + y[i]) },
      { name: 'target', type: 'number', values: Float64Array.from(x, (e, i) => 2 * e - y[i]) },
    ],
  };
}

const BLOCKS = { x: 'east', y: 'north', size: 10 };
const table = (frame: Frame) =>
  (modelTable.run([asOutput(frame)], { target: 'target', predictors: ['v'], groups: null, time: null, blocks: BLOCKS }, stepContext()) as { frame: Frame }).frame;
const splitOf = (frame: Frame) =>
  holdout.run([asOutput(frame)], { target: 'target', by: 'blocks', fraction: 0.2, cutoff: null, gap: 0, groups: null, time: null }, stepContext()) as HoldoutOutput;

describe('block names', () => {
  it('name the lower-left corner of the square a point lies in, below zero and for fractional sizes too', () => {
    expect(blockName(12, 99.9, 10)).toBe('x10 y90');
    expect(blockName(-0.5, -10, 10)).toBe('x-10 y-10');
    // a point on an edge belongs to the block above it
    expect(blockName(20, 0, 10)).toBe('x20 y0');
    // 0.3 / 0.1 is 2.9999999999999996 in float64: the name is of the block the arithmetic puts it in, printed without noise
    expect(blockName(0.35, 7.3, 0.1)).toBe('x0.3 y7.3');
    expect(blockName(46.25, 7.75, 0.5)).toBe('x46 y7.5');
  });
});

describe('splits by spatial blocks', () => {
  it('keep every row of a block on one side of the holdout and in one fold', () => {
    const frame = table(placed(600, 'blocks'));
    const block = column(frame, BLOCK_COLUMN).values as string[];
    const s = splitOf(frame);
    const f = folds.run([asOutput(frame), s], { target: 'target', k: 5, by: 'blocks', gap: 0, groups: null, time: null }, stepContext()) as FoldsOutput;
    const side = new Map<string, Set<string>>();
    for (const r of s.test) side.set(block[r], (side.get(block[r]) ?? new Set()).add('holdout'));
    s.train.forEach((r, k) => side.set(block[r], (side.get(block[r]) ?? new Set()).add(`fold ${f.fold[k]}`)));
    // about 100 blocks of 10 × 10 m; each on exactly one side, in exactly one fold
    expect(side.size).toBeGreaterThan(90);
    for (const [name, sides] of side) expect([...sides], name).toHaveLength(1);
    expect(new Set(f.fold)).toEqual(new Set([0, 1, 2, 3, 4]));
    expect(s.test.length / frame.rows).toBeGreaterThan(0.15);
    expect(s.test.length / frame.rows).toBeLessThan(0.25);
    expect(s.units.kind).toBe('block');
    expect(s.testGroups).toBe(s.units.holdout.length);
  });

  it('hold out the same blocks whatever the order of the rows', () => {
    const frame = table(placed(400, 'order'));
    const reversed: Frame = { rows: frame.rows, columns: frame.columns.map((c) => ({ ...c, values: (Array.isArray(c.values) ? [...c.values] : Float64Array.from(c.values as Float64Array)).reverse() })) as Frame['columns'] };
    expect(splitOf(reversed).units.holdout).toEqual(splitOf(frame).units.holdout);
  });

  it('stop when a row has no coordinate, naming the column and the count', async () => {
    const frame = placed(50, 'missing');
    (frame.columns[1].values as Float64Array)[3] = NaN;
    (frame.columns[1].values as Float64Array)[7] = Infinity;
    expect((await errorOf(() => table(frame))).message).toBe(messages.blockCoordinateMissing('north', 2));
  });

  it('stop when the training rows hold fewer blocks than folds', async () => {
    // one block of 1,000 m holds every row: nothing to split into folds (the holdout, at random, holds rows of it too)
    const one = (modelTable.run([asOutput(placed(40, 'few'))], { target: 'target', predictors: ['v'], groups: null, time: null, blocks: { ...BLOCKS, size: 1000 } }, stepContext()) as { frame: Frame }).frame;
    const s = holdout.run([asOutput(one)], { target: 'target', by: 'random', fraction: 0.2, cutoff: null, gap: 0, groups: null, time: null }, stepContext()) as HoldoutOutput;
    const e = await errorOf(() => folds.run([asOutput(one), s], { target: 'target', k: 3, by: 'blocks', gap: 0, groups: null, time: null }, stepContext()));
    expect(e.message).toBe(messages.foldsTooFew(1, 'blocks', 1, 2, 3, 3));
  });
});
