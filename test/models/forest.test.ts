/**
 * Random forests: reproducibility across thread counts, out-of-bag estimates and importances.
 */
import { describe, expect, it } from 'vitest';
import {
  DEFAULT_MIN_LEAF,
  DEFAULT_MTRY_FRACTION,
  DEFAULT_TREES,
  defaultMtry,
  fitDecisionTree,
  fitForest,
  impurityImportance,
  MIN_DRAWS_FOR_THREADS,
  oob,
  predictForest,
  serializeForest,
} from '../../models/forest.js';
import { r2 } from '../../models/metrics.js';
import { fittedSlotSettings } from '../../models/forest-pool.js';
import { friedman1 } from '../bench/friedman.js';
import { sameBits } from './forest-helpers.js';

const train = friedman1(1500, 'forest-train');
const heldOut = friedman1(1500, 'forest-test');
const base = { trees: 40, maxDepth: null, minLeaf: 5, mtry: 3 };

describe('defaults', () => {
  it('are those of randomForest for regression (mtry = floor(p/3), at least 1; 500 trees) with leaves of at least 3', () => {
    // Source: Liaw & Wiener (2002), R News 2(3), randomForest defaults for regression. Its node size of
    // 5 is not a minimum leaf size; models/defaults.ts says why the minimum leaf is 3.
    expect(defaultMtry(10)).toBe(3);
    expect(defaultMtry(2)).toBe(1);
    expect(DEFAULT_MTRY_FRACTION).toBeCloseTo(1 / 3);
    expect(DEFAULT_MIN_LEAF).toBe(3);
    expect(DEFAULT_TREES).toBe(500);
  });
});

describe('reproducibility', () => {
  it('gives bit-identical forests, predictions, OOB and importances with 1 and 2 worker threads', async () => {
    // Large enough that two threads are really used.
    const big = friedman1(10000, 'forest-threads');
    const opts = { ...base, trees: Math.ceil(MIN_DRAWS_FOR_THREADS / big.x.rows), seed: 'same' };
    const one = await fitForest(big.x, big.y, { ...opts, workers: 1 });
    const two = await fitForest(big.x, big.y, { ...opts, workers: 2 });
    expect(sameBits(serializeForest(one), serializeForest(two))).toBe(true);
    expect(sameBits(predictForest(one, heldOut.x), predictForest(two, heldOut.x))).toBe(true);
    expect(sameBits(oob(one).predictions, oob(two).predictions)).toBe(true);
    expect(sameBits(impurityImportance(one), impurityImportance(two))).toBe(true);
  });

  it('gives different trees for another seed', async () => {
    const a = await fitForest(train.x, train.y, { ...base, trees: 5, seed: 'a' });
    const b = await fitForest(train.x, train.y, { ...base, trees: 5, seed: 'b' });
    expect(sameBits(a.trees[0].thresholdOrValue, b.trees[0].thresholdOrValue)).toBe(false);
    expect(sameBits(predictForest(a, heldOut.x), predictForest(b, heldOut.x))).toBe(false);
  });

  it('resolves a fractional mtry to floor(fraction × p), at least 1', async () => {
    const f = await fitForest(train.x, train.y, { ...base, trees: 1, mtry: 0.33, seed: 's' });
    expect(f.options.mtry).toBe(3);
    const g = await fitForest(train.x, train.y, { ...base, trees: 1, mtry: 0.01, seed: 's' });
    expect(g.options.mtry).toBe(1);
  });
});

describe('out-of-bag estimates', () => {
  it('exclude and count rows that were never out of bag instead of failing', async () => {
    // Source: with a bootstrap of n draws a row is out of bag with probability (1 − 1/n)^n ≈ e^−1
    // (Breiman 1996, "Out-of-bag estimation"), so one tree leaves about 63 % of rows without an estimate.
    const f = await fitForest(train.x, train.y, { ...base, trees: 1, seed: 's' });
    const o = oob(f);
    expect(o.rowsExcluded / train.x.rows).toBeGreaterThan(0.58);
    expect(o.rowsExcluded / train.x.rows).toBeLessThan(0.68);
    let nan = 0;
    for (const v of o.predictions) if (Number.isNaN(v)) nan++;
    expect(nan).toBe(o.rowsExcluded);
    expect(o.r2).not.toBeNull();
    // With one tree, a row's OOB prediction is that tree's prediction for it.
    const fitted = predictForest(f, train.x);
    for (let r = 0; r < train.x.rows; r++) if (!Number.isNaN(o.predictions[r])) expect(o.predictions[r]).toBe(fitted[r]);

    const tree = await fitDecisionTree(train.x, train.y, { maxDepth: 3, minLeaf: 5, seed: 's' });
    const none = oob(tree);
    expect(none.rowsExcluded).toBe(train.x.rows);
    expect(none.r2).toBeNull();
    expect(none.reason).toMatch(/no row was ever out of bag/);
  });

  it('can be skipped: the same trees, importances and predictions, and an oob that says it was not followed', async () => {
    for (const workers of [1, 2]) {
      const big = friedman1(10000, 'forest-no-oob');
      const opts = { ...base, trees: Math.ceil(MIN_DRAWS_FOR_THREADS / big.x.rows), seed: 'skip', workers };
      const followed = await fitForest(big.x, big.y, opts);
      const skipped = await fitForest(big.x, big.y, { ...opts, outOfBag: false });
      expect(skipped.trees.length).toBe(followed.trees.length);
      skipped.trees.forEach((t, i) => {
        expect(sameBits(t.thresholdOrValue, followed.trees[i].thresholdOrValue)).toBe(true);
        expect(sameBits(t.feature, followed.trees[i].feature)).toBe(true);
      });
      expect(sameBits(impurityImportance(skipped), impurityImportance(followed))).toBe(true);
      expect(sameBits(predictForest(skipped, heldOut.x), predictForest(followed, heldOut.x))).toBe(true);
      expect(oob(followed).r2).not.toBeNull();
      const o = oob(skipped);
      expect(o.r2).toBeNull();
      expect(o.rowsExcluded).toBe(big.x.rows);
      expect(o.predictions.every((v) => Number.isNaN(v))).toBe(true);
      expect(o.reason).toMatch(/out-of-bag rows were not followed/);
    }
    await expect(fitForest(train.x, train.y, { ...base, trees: 2, seed: 'bad', outOfBag: 0 as unknown as boolean })).rejects.toThrow(
      'outOfBag must be true or false, got 0',
    );
  });

  it('come with the training rows’ predictions when asked, equal bit for bit to predicting them', async () => {
    const big = friedman1(10000, 'forest-fitted');
    const trees = Math.ceil(MIN_DRAWS_FOR_THREADS / big.x.rows);
    for (const workers of [1, 2]) {
      for (const outOfBag of [true, false]) {
        const f = await fitForest(big.x, big.y, { ...base, trees, seed: 'fitted', workers, fitted: true, outOfBag });
        expect(sameBits(f.fitted!, predictForest(f, big.x))).toBe(true);
        // asked for the fitted values, the out-of-bag rows are followed anyway
        expect(oob(f).r2).not.toBeNull();
      }
    }
    // with no shared slot to leave them in, a worker sends its trees' values as copies, and this
    // thread copies those of its own trees that wait for earlier ones
    fittedSlotSettings.perThread = 0;
    try {
      const copied = await fitForest(big.x, big.y, { ...base, trees, seed: 'fitted', workers: 2, fitted: true });
      expect(sameBits(copied.fitted!, predictForest(copied, big.x))).toBe(true);
    } finally {
      fittedSlotSettings.perThread = 3;
    }
    // one tree (no division), a tree grown without bootstrap, and a target far beyond 2^400 (grown scaled)
    const one = await fitForest(train.x, train.y, { ...base, trees: 1, seed: 'one', fitted: true });
    expect(sameBits(one.fitted!, predictForest(one, train.x))).toBe(true);
    const whole = await fitForest(train.x, train.y, { ...base, trees: 3, replace: false, seed: 'whole', fitted: true });
    expect(sameBits(whole.fitted!, predictForest(whole, train.x))).toBe(true);
    const huge = train.y.map((v) => v * 2 ** 500);
    const scaled = await fitForest(train.x, huge, { ...base, trees: 5, seed: 'huge', fitted: true });
    expect(sameBits(scaled.fitted!, predictForest(scaled, train.x))).toBe(true);
    expect(await fitForest(train.x, train.y, { ...base, trees: 2, seed: 'none' })).not.toHaveProperty('fitted');
    await expect(fitForest(train.x, train.y, { ...base, trees: 2, seed: 'bad', fitted: 'yes' as unknown as boolean })).rejects.toThrow(
      'fitted must be true or false, got yes',
    );
  });

  it('give an R² close to the held-out R² on Friedman #1', async () => {
    // Source: Breiman (2001), "Random Forests", sec. 3.1: the OOB estimate is about as accurate as a
    // test set of the same size.
    const f = await fitForest(train.x, train.y, { ...base, trees: 150, seed: 'oob' });
    const o = oob(f);
    const test = r2(heldOut.y, predictForest(f, heldOut.x)).value ?? NaN;
    expect(o.rowsExcluded).toBe(0);
    expect(o.r2).toBeGreaterThan(0.75);
    expect(Math.abs((o.r2 ?? 0) - test)).toBeLessThan(0.04);
  });
});

describe('importance', () => {
  it('impurity importance (training data) also puts the noise predictors last', async () => {
    const f = await fitForest(train.x, train.y, { ...base, trees: 50, seed: 'imp' });
    const imp = impurityImportance(f);
    const noise = Math.max(...Array.from(imp.slice(5)));
    for (const j of [0, 1, 3]) expect(imp[j]).toBeGreaterThan(noise);
  });
});
