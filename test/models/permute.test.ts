/**
 * Permuted predictions in one pass over the trees equal predicting each permuted matrix, bit for
 * bit: the shortcut must not change a permutation importance.
 */
import { describe, expect, it } from 'vitest';
import { fitForest, predictForest } from '../../models/forest.js';
import { predictPermuted } from '../../models/permute.js';
import { shuffle } from '../../core/rng.js';
import seedrandom from 'seedrandom';
import { friedman1 } from '../bench/friedman.js';

describe('permuted forest predictions', () => {
  it('equal predicting the permuted matrix, for one column, two columns and the identity order', async () => {
    const { x, y } = friedman1(600, 'permute');
    const forest = await fitForest(x, y, { trees: 30, maxDepth: null, minLeaf: 3, mtry: 4, seed: 'permute' });
    const rand = seedrandom('orders');
    const rows = [...Array(x.rows).keys()];
    const orders = [shuffle([...rows], rand), shuffle([...rows], rand), rows];
    for (const columns of [[0], [3, 7]]) {
      const got = predictPermuted(forest, x, columns, orders);
      orders.forEach((order, k) => {
        const moved = x.columns.slice();
        for (const c of columns) moved[c] = Float64Array.from(order, (r) => x.columns[c][r]);
        expect(Array.from(got[k])).toEqual(Array.from(predictForest(forest, { ...x, columns: moved })));
      });
    }
  });

  it('equal predicting the permuted matrix with more repeats than one walk carries together (31)', async () => {
    const { x, y } = friedman1(300, 'permute-many');
    const forest = await fitForest(x, y, { trees: 10, maxDepth: null, minLeaf: 3, mtry: 4, seed: 'permute-many' });
    const rand = seedrandom('many-orders');
    const rows = [...Array(x.rows).keys()];
    const orders = Array.from({ length: 31 }, () => shuffle([...rows], rand));
    const got = predictPermuted(forest, x, [1], orders);
    for (const k of [0, 17, 30]) {
      const moved = x.columns.slice();
      moved[1] = Float64Array.from(orders[k], (r) => x.columns[1][r]);
      expect(Array.from(got[k])).toEqual(Array.from(predictForest(forest, { ...x, columns: moved })));
    }
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
  }, 60_000);
});
