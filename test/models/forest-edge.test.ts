/**
 * Forest engine edge cases: degenerate columns and targets, tiny samples, coarse bins, many features.
 */
import { describe, expect, it } from 'vitest';
import { deserializeForest, fitDecisionTree, fitForest, oob, predictForest, serializeForest } from '../../models/forest.js';
import { r2 } from '../../models/metrics.js';
import { rngFor } from '../../models/rng.js';
import { friedman1 } from '../bench/friedman.js';
import { sameBits } from './forest-helpers.js';

describe('forest edge cases', () => {
  for (const [label, factor] of [['2^1000', 2 ** 1000], ['2^-1000', 2 ** -1000]] as const) {
    it(`grows the same forest on a target scaled by ${label} as on the unscaled one, scaled (squared sums would overflow or underflow)`, async () => {
      const { x, y } = friedman1(300, 'scaled');
      const big = y.map((v) => v * factor);
      const opts = { trees: 20, maxDepth: null, minLeaf: 3, mtry: 3, seed: 's' };
      const a = await fitForest(x, y, opts);
      const b = await fitForest(x, big, opts);
      // multiplying by a power of two is exact, so the trees and predictions agree bit for bit
      expect(b.trees.map((t) => Array.from(t.feature))).toEqual(a.trees.map((t) => Array.from(t.feature)));
      expect(sameBits(predictForest(b, x), predictForest(a, x).map((v) => v * factor))).toBe(true);
      expect(oob(b).r2).toBe(oob(a).r2);
    });
  }

  it('grows real splits on a target near 1e300, where it once made none', async () => {
    const { x, y } = friedman1(300, 'huge');
    const f = await fitDecisionTree(x, y.map((v) => v * 1e300), { maxDepth: 4, minLeaf: 3, seed: 's' });
    expect(f.trees[0].feature.length).toBeGreaterThan(1);
    expect(r2(y.map((v) => v * 1e300), predictForest(f, x)).value).toBeGreaterThan(0.5);
  });

  it('predicts the mean for a constant target and ignores constant predictors', async () => {
    const { x } = friedman1(50, 'const');
    const y = new Float64Array(50).fill(2.5);
    const f = await fitForest(x, y, { trees: 5, maxDepth: null, minLeaf: 1, mtry: 3, seed: 's' });
    for (const t of f.trees) expect(t.feature.length).toBe(1);
    expect(Array.from(predictForest(f, x)).every((v) => v === 2.5)).toBe(true);

    const flat = { columns: [new Float64Array(50).fill(1), x.columns[0]], names: ['flat', 'x1'], rows: 50 };
    const g = await fitDecisionTree(flat, x.columns[0].slice(), { maxDepth: null, minLeaf: 1, seed: 's' });
    expect(g.trees[0].feature.every((feat) => feat !== 0)).toBe(true);
  });

  it('fits with exactly 2 × min_leaf rows, and a sample too small to split gives a single leaf', async () => {
    const { x, y } = friedman1(10, 'tiny');
    const f = await fitDecisionTree(x, y, { maxDepth: null, minLeaf: 5, seed: 's' });
    expect(f.trees[0].feature.length).toBe(3);
    const g = await fitForest(x, y, { trees: 3, maxDepth: null, minLeaf: 5, mtry: 2, sampleFraction: 0.5, seed: 's' });
    for (const t of g.trees) expect(t.feature.length).toBe(1);
  });

  it('works with two bins per feature and with many features', async () => {
    const { x, y } = friedman1(400, 'coarse');
    const f = await fitForest(x, y, { trees: 10, maxDepth: null, minLeaf: 5, mtry: 3, maxBins: 2, seed: 's' });
    // Two bins per feature: at most one threshold per feature in all the trees.
    for (let j = 0; j < 10; j++) {
      const th = new Set<number>();
      for (const t of f.trees) t.feature.forEach((feat, i) => feat === j && th.add(t.thresholdOrValue[i]));
      expect(th.size).toBeLessThanOrEqual(1);
    }
    const g = rngFor('wide', 'x');
    const p = 300;
    const columns = Array.from({ length: p }, () => Float64Array.from({ length: 300 }, () => g.float()));
    const yw = Float64Array.from({ length: 300 }, (_, r) => 5 * columns[7][r] + columns[200][r]);
    const wide = { columns, names: columns.map((_, j) => `v${j}`), rows: 300 };
    const fw = await fitForest(wide, yw, { trees: 20, maxDepth: null, minLeaf: 3, mtry: 100, seed: 's' });
    expect(oob(fw).r2).toBeGreaterThan(0.5);
    expect(sameBits(serializeForest(deserializeForest(serializeForest(fw))), serializeForest(fw))).toBe(true);
  });

  it('handles heavily repeated values and a large target offset', async () => {
    const train = friedman1(2000, 'ties');
    const test = friedman1(2000, 'ties-test');
    const round = (m: typeof train.x): typeof train.x => ({ ...m, columns: m.columns.map((c) => c.map((v) => Math.round(v * 4) / 4)) });
    const opts = { trees: 30, maxDepth: null, minLeaf: 5, mtry: 3, seed: 's' };
    const base = await fitForest(round(train.x), train.y, opts);
    const shifted = await fitForest(round(train.x), train.y.map((v) => v + 1e6), opts);
    const r2Base = r2(test.y, predictForest(base, round(test.x))).value ?? NaN;
    const r2Shifted = r2(test.y.map((v) => v + 1e6), predictForest(shifted, round(test.x))).value ?? NaN;
    // The target is centred before split search, so an offset of 10^6 costs no accuracy (ties
    // between equally good splits may still break differently).
    expect(r2Base).toBeGreaterThan(0.6);
    expect(Math.abs(r2Shifted - r2Base)).toBeLessThan(0.01);
  });
});
