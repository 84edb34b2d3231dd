/**
 * Permuted predictions in one pass over the trees equal predicting each permuted matrix, bit for
 * bit: the shortcut must not change a permutation importance.
 */
import { describe, expect, it } from 'vitest';
import type { Matrix } from '../../models/checks.js';
import { fitForest, predictForest, type Forest } from '../../models/forest.js';
import { predictPermuted } from '../../models/permute.js';
import { rightChildren, treeDepth } from '../../models/tree.js';
import { shuffle } from '../../core/rng.js';
import seedrandom from 'seedrandom';
import { friedman1 } from '../bench/friedman.js';

/** `x` with the values of `columns` in row i read from row `order[i]`. */
function permutedMatrix(x: Matrix, columns: number[], order: ArrayLike<number>): Matrix {
  const moved = x.columns.slice();
  for (const c of columns) moved[c] = Float64Array.from(order, (r) => x.columns[c][r]);
  return { ...x, columns: moved };
}

/** predictPermuted gives, for each repeat in `repeats` (all by default), what predicting its permuted matrix gives, bit for bit. */
function expectAsPredicted(forest: Forest, x: Matrix, columns: number[], orders: ArrayLike<number>[], repeats: number[] = [...orders.keys()]): void {
  const got = predictPermuted(forest, x, columns, orders);
  for (const k of repeats) expect(Array.from(got[k])).toEqual(Array.from(predictForest(forest, permutedMatrix(x, columns, orders[k]))));
}

describe('permuted forest predictions', () => {
  it('equal predicting the permuted matrix, for one column, two columns and the identity order', async () => {
    const { x, y } = friedman1(600, 'permute');
    const forest = await fitForest(x, y, { trees: 30, maxDepth: null, minLeaf: 3, mtry: 4, seed: 'permute' });
    const rand = seedrandom('orders');
    const rows = [...Array(x.rows).keys()];
    const orders = [shuffle([...rows], rand), shuffle([...rows], rand), rows];
    for (const columns of [[0], [3, 7]]) expectAsPredicted(forest, x, columns, orders);
  });

  it('equal predicting the permuted matrix with more repeats than one walk carries together (31)', async () => {
    const { x, y } = friedman1(300, 'permute-many');
    const forest = await fitForest(x, y, { trees: 10, maxDepth: null, minLeaf: 3, mtry: 4, seed: 'permute-many' });
    const rand = seedrandom('many-orders');
    const rows = [...Array(x.rows).keys()];
    const orders = Array.from({ length: 31 }, () => shuffle([...rows], rand));
    expectAsPredicted(forest, x, [1], orders, [0, 17, 30]);
  });

  it('equal predicting the permuted matrix down paths deeper than 64 nodes', async () => {
    // a hand-made chain: split k (on feature k % 2, threshold 1 - k / 200) sends rows at or below it
    // on to split k + 1, the rest to a leaf of their own, so a row of small values goes 100 deep
    const splits = 100;
    const feature = Int32Array.from({ length: 2 * splits + 1 }, (_, i) => (i < splits ? i % 2 : -1));
    const right = rightChildren(feature) as Int32Array;
    const thresholdOrValue = Float64Array.from({ length: 2 * splits + 1 }, (_, i) => (i < splits ? 1 - i / 200 : i));
    const chain = { feature, thresholdOrValue, right, draws: new Int32Array(feature.length).fill(1) };
    expect(treeDepth(chain)).toBe(splits);
    const rand = seedrandom('deep');
    const n = 200;
    const x = { rows: n, names: ['a', 'b'], columns: [Float64Array.from({ length: n }, () => rand() ** 3), Float64Array.from({ length: n }, () => rand() ** 3)] };
    const base = await fitForest(x, Float64Array.from({ length: n }, () => rand()), { trees: 1, maxDepth: 1, minLeaf: 1, mtry: null, seed: 'deep' });
    const forest = { ...base, trees: [chain, base.trees[0]] };
    const rows = [...Array(n).keys()];
    const orders = [shuffle([...rows], rand), shuffle([...rows], rand)];
    for (const columns of [[0], [1]]) expectAsPredicted(forest, x, columns, orders);
  });

  it('equal predicting the permuted matrix when a leaf holds a value that is not finite', async () => {
    // a hand-made stump whose left leaf is infinite: repeats that miss it must not pick up 0 × ∞
    const feature = Int32Array.of(0, -1, -1);
    const stump = { feature, thresholdOrValue: Float64Array.of(0.5, Infinity, 1), right: rightChildren(feature) as Int32Array, draws: Int32Array.of(2, 1, 1) };
    const rand = seedrandom('infinite');
    const n = 50;
    const x = { rows: n, names: ['a', 'b'], columns: [Float64Array.from({ length: n }, () => rand()), Float64Array.from({ length: n }, () => rand())] };
    const base = await fitForest(x, Float64Array.from({ length: n }, () => rand()), { trees: 1, maxDepth: 2, minLeaf: 1, mtry: null, seed: 'inf' });
    const forest = { ...base, trees: [base.trees[0], stump] };
    const rows = [...Array(n).keys()];
    const orders = [shuffle([...rows], rand), shuffle([...rows], rand), shuffle([...rows], rand)];
    for (const order of orders) {
      const want = predictForest(forest, permutedMatrix(x, [0], order));
      expect(want.some((v) => v === Infinity) && want.some(Number.isFinite)).toBe(true);
    }
    expectAsPredicted(forest, x, [0], orders);
  });

  it('refuses a matrix that is not the forest’s, like predict does', async () => {
    const { x, y } = friedman1(100, 'permute-names');
    const forest = await fitForest(x, y, { trees: 3, maxDepth: 3, minLeaf: 5, mtry: null, seed: 's' });
    expect(() => predictPermuted(forest, { ...x, names: x.names.slice().reverse() }, [0], [[...Array(x.rows).keys()]])).toThrow(/the prediction matrix has columns/);
  });
});

describe('permutation importance on threads', () => {
  it('gives the same numbers on one thread and on two, above the work that starts a worker', async () => {
    const { permutedOnThreads, MIN_PERMUTE_WORK_FOR_THREADS } = await import('../../models/permute-pool.js');
    const { serializeForest } = await import('../../models/forest.js');
    const { x, y } = friedman1(2500, 'permute-threads');
    const forest = await fitForest(x, y, { trees: 80, maxDepth: 12, minLeaf: 5, mtry: 3, seed: 'threads' });
    const rand = seedrandom('thread orders');
    const rows = [...Array(x.rows).keys()];
    const jobs = x.names.map((_, j) => ({ columns: [j] }));
    const orders = jobs.map(() => Array.from({ length: 10 }, () => Int32Array.from(shuffle([...rows], rand))));
    expect(x.rows * 80 * 10 * jobs.length).toBeGreaterThanOrEqual(MIN_PERMUTE_WORK_FOR_THREADS);
    const one = await permutedOnThreads(forest, serializeForest(forest), x, jobs, orders, 1);
    const two = await permutedOnThreads(forest, serializeForest(forest), x, jobs, orders, 2);
    expect(two.map((j) => j.map((p) => Array.from(p)))).toEqual(one.map((j) => j.map((p) => Array.from(p))));
    // every job at once (one walk of a row's path for all) equals each job on its own
    jobs.forEach((job, m) => expect(one[m].map((p) => Array.from(p))).toEqual(predictPermuted(forest, x, job.columns, orders[m]).map((p) => Array.from(p))));
  }, 60_000);

  it('gives each job of several columns what predicting its permuted matrix gives, on three threads', async () => {
    const { permutedOnThreads, MIN_PERMUTE_WORK_FOR_THREADS } = await import('../../models/permute-pool.js');
    const { serializeForest } = await import('../../models/forest.js');
    const { x, y } = friedman1(4000, 'permute-groups');
    const forest = await fitForest(x, y, { trees: 80, maxDepth: 12, minLeaf: 5, mtry: 3, seed: 'groups' });
    const rand = seedrandom('group orders');
    const rows = [...Array(x.rows).keys()];
    // columns permuted together, as a one-hot predictor's are; some columns in no job
    const jobs = [{ columns: [0, 5] }, { columns: [3] }, { columns: [7, 8, 9] }];
    // repeats of different counts, one more than a walk carries together (31)
    const orders = [12, 31, 30].map((repeats) => Array.from({ length: repeats }, () => Int32Array.from(shuffle([...rows], rand))));
    expect(x.rows * 80 * (12 + 31 + 30)).toBeGreaterThanOrEqual(MIN_PERMUTE_WORK_FOR_THREADS);
    const got = await permutedOnThreads(forest, serializeForest(forest), x, jobs, orders, 3);
    jobs.forEach((job, m) =>
      [0, 11].forEach((k) => {
        const moved = x.columns.slice();
        for (const c of job.columns) moved[c] = Float64Array.from(orders[m][k], (r) => x.columns[c][r]);
        expect(Array.from(got[m][k])).toEqual(Array.from(predictForest(forest, { ...x, columns: moved })));
      }),
    );
  }, 60_000);

  it('says a worker failed, and why, instead of returning what the other threads computed', async () => {
    const { permutedOnThreads } = await import('../../models/permute-pool.js');
    const { x, y } = friedman1(2500, 'permute-fail');
    const forest = await fitForest(x, y, { trees: 80, maxDepth: 6, minLeaf: 5, mtry: 3, seed: 'fail' });
    const rows = [...Array(x.rows).keys()];
    const jobs = x.names.map((_, j) => ({ columns: [j] }));
    const orders = jobs.map(() => Array.from({ length: 10 }, () => rows));
    await expect(permutedOnThreads(forest, new TextEncoder().encode('not a forest at all'), x, jobs, orders, 2)).rejects.toThrow(
      /permutation importance failed in a worker thread: EngineInputError: these bytes are not a dendrolog forest/,
    );
  }, 60_000);
});
