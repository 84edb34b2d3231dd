/**
 * Every input check of the forest engine throws EngineInputError with the catalogue message.
 */
import { describe, expect, it } from 'vitest';
import {
  EngineInputError,
  engineMessages as msg,
  fitDecisionTree,
  fitForest,
  predictForest,
  type ForestOptions,
  type Matrix,
} from '../../models/forest.js';
import { friedman1 } from '../bench/friedman.js';

const { x, y } = friedman1(60, 'checks');
const opts: ForestOptions = { trees: 3, maxDepth: null, minLeaf: 5, mtry: 3, seed: 's' };

function withValue(m: Matrix, f: number, row: number, v: number): Matrix {
  const columns = m.columns.map((c) => c.slice());
  columns[f][row] = v;
  return { ...m, columns };
}

async function rejects(p: Promise<unknown>, message: string): Promise<void> {
  const err = await p.then(
    () => null,
    (e: unknown) => e,
  );
  expect(err).toBeInstanceOf(EngineInputError);
  expect((err as Error).message).toBe(message);
}

describe('fitForest input checks', () => {
  it('names the feature and the 0-based row of the first NaN or infinite value', async () => {
    await rejects(fitForest(withValue(x, 2, 17, NaN), y, opts), msg.nonFinite('x3', 17, NaN));
    await rejects(fitForest(withValue(withValue(x, 9, 40, -Infinity), 9, 41, NaN), y, opts), msg.nonFinite('x10', 40, -Infinity));
    expect(msg.nonFinite('x3', 17, NaN)).toMatch(/feature "x3" has NaN .* row index 17 \(0-based/);
  });

  it('calls the target "target" when it holds NaN or Infinity', async () => {
    const bad = y.slice();
    bad[5] = Infinity;
    await rejects(fitForest(x, bad, opts), msg.nonFinite('target', 5, Infinity));
    expect(msg.nonFinite('target', 5, Infinity)).toMatch(/^the target has Infinity at row index 5/);
  });

  it('refuses fewer rows than 2 × min_leaf, saying the counts and the fix', async () => {
    const small = friedman1(7, 'few');
    await rejects(fitForest(small.x, small.y, opts), msg.tooFewRows(7, 5));
    expect(msg.tooFewRows(7, 5)).toMatch(/only 7 rows.*min_leaf is 5.*10 rows.*lower min_leaf to at most 3/);
    await rejects(fitDecisionTree(small.x, small.y, { maxDepth: 2, minLeaf: 4, seed: 's' }), msg.tooFewRows(7, 4));
  });

  it('refuses mtry larger than the number of predictors, giving the allowed range', async () => {
    await rejects(fitForest(x, y, { ...opts, mtry: 11 }), msg.mtryTooLarge(11, 10));
    expect(msg.mtryTooLarge(11, 10)).toMatch(/from 1 to 10/);
    await rejects(fitForest(x, y, { ...opts, mtry: 0 }), msg.mtryInvalid(0, 10));
    await rejects(fitForest(x, y, { ...opts, mtry: 2.5 }), msg.mtryInvalid(2.5, 10));
  });

  it('refuses bad counts and fractions', async () => {
    await rejects(fitForest(x, y, { ...opts, trees: 0 }), msg.notInteger('trees', 0, 1));
    await rejects(fitForest(x, y, { ...opts, trees: 1.5 }), msg.notInteger('trees', 1.5, 1));
    await rejects(fitForest(x, y, { ...opts, minLeaf: 0 }), msg.notInteger('min_leaf', 0, 1));
    await rejects(fitForest(x, y, { ...opts, maxDepth: 0 }), msg.maxDepth(0));
    await rejects(fitForest(x, y, { ...opts, minSplit: 1 }), msg.notInteger('min_split', 1, 2));
    await rejects(fitForest(x, y, { ...opts, sampleFraction: 0 }), msg.sampleFraction(0));
    await rejects(fitForest(x, y, { ...opts, sampleFraction: 1.5 }), msg.sampleFraction(1.5));
    await rejects(fitForest(x, y, { ...opts, workers: 0 }), msg.notInteger('workers', 0, 1));
    await rejects(fitForest(x, y, { ...opts, maxBins: 300 }), msg.notInteger('max_bins', 300, 2, 256));
  });

  it('refuses mismatched shapes', async () => {
    await rejects(fitForest(x, y.subarray(1), opts), msg.targetLength(59, 60));
    await rejects(fitForest({ ...x, names: x.names.slice(1) }, y, opts), msg.columnCount(10, 9));
    await rejects(fitForest({ columns: [], names: [], rows: 60 }, y, opts), msg.noPredictors());
    await rejects(fitForest({ ...x, rows: 0 }, new Float64Array(0), opts), msg.noRows());
  });
});

describe('prediction input checks', () => {
  it('refuses other column names or non-finite values', async () => {
    const f = await fitForest(x, y, opts);
    const renamed = { ...x, names: [...x.names].reverse() };
    expect(() => predictForest(f, renamed)).toThrow(new EngineInputError(msg.namesDiffer(x.names, renamed.names)));
    expect(() => predictForest(f, withValue(x, 0, 3, NaN))).toThrow(new EngineInputError(msg.nonFinite('x1', 3, NaN)));
  });
});
