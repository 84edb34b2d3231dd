/**
 * Single CART trees: structural facts of binary trees and exactness of the split search.
 */
import { describe, expect, it } from 'vitest';
import { fitDecisionTree, predictForest } from '../../models/forest.js';
import { treeDepth } from '../../models/tree.js';
import { friedman1 } from '../bench/friedman.js';
import { column } from './forest-helpers.js';

describe('decision tree', () => {
  it('of depth d predicts at most 2^d distinct values', async () => {
    // Source: Breiman, Friedman, Olshen & Stone (1984), Classification and Regression Trees: a binary
    // tree with d levels of splits has at most 2^d terminal nodes, each predicting one constant.
    const train = friedman1(800, 'tree-depth-train');
    const test = friedman1(3000, 'tree-depth-test');
    for (const d of [1, 2, 3, 5]) {
      const tree = await fitDecisionTree(train.x, train.y, { maxDepth: d, minLeaf: 1, seed: 's' });
      expect(treeDepth(tree.trees[0])).toBeLessThanOrEqual(d);
      const distinct = new Set(predictForest(tree, test.x));
      expect(distinct.size).toBeLessThanOrEqual(2 ** d);
      expect(distinct.size).toBeGreaterThan(1);
    }
  });

  it('places a single split of a step function midway between the two adjacent training values', async () => {
    // Source: CART (Breiman et al. 1984) and rpart/scikit-learn place a numeric split at the midpoint
    // between the two consecutive observed values it separates.
    const xs = [0.5, 1, 2, 3, 4, 6, 7, 8, 9, 10];
    const y = Float64Array.from(xs, (v) => (v <= 4 ? 1 : 5));
    const tree = await fitDecisionTree(column('x', xs), y, { maxDepth: 1, minLeaf: 1, seed: 's' });
    const t = tree.trees[0];
    expect(t.feature[0]).toBe(0);
    expect(t.thresholdOrValue[0]).toBe(5);
    expect(Array.from(predictForest(tree, column('x', [4.99, 5, 5.01])))).toEqual([1, 1, 5]);
  });

  it('without bootstrap, with every feature and min_leaf 1, reproduces distinct training targets exactly', async () => {
    // Source: CART grown to purity interpolates the training data (Breiman et al. 1984, ch. 3; the
    // same holds for scikit-learn's DecisionTreeRegressor with default settings).
    const { x, y } = friedman1(200, 'tree-exact');
    expect(new Set(y).size).toBe(200);
    const tree = await fitDecisionTree(x, y, { maxDepth: null, minLeaf: 1, seed: 's' });
    const fitted = predictForest(tree, x);
    for (let r = 0; r < y.length; r++) expect(fitted[r]).toBe(y[r]);
  });

  it('keeps at least min_leaf rows in every leaf', async () => {
    const { x, y } = friedman1(500, 'tree-minleaf');
    const tree = await fitDecisionTree(x, y, { maxDepth: null, minLeaf: 7, seed: 's' });
    const t = tree.trees[0];
    const counts = new Map<number, number>();
    for (let r = 0; r < x.rows; r++) {
      let node = 0;
      while (t.feature[node] >= 0) node = x.columns[t.feature[node]][r] <= t.thresholdOrValue[node] ? node + 1 : t.right[node];
      counts.set(node, (counts.get(node) ?? 0) + 1);
    }
    expect(Math.min(...counts.values())).toBeGreaterThanOrEqual(7);
  });

  it('does not split a node whose targets are all equal', async () => {
    const tree = await fitDecisionTree(column('x', [1, 2, 3, 4, 5, 6]), new Float64Array(6).fill(0.1), {
      maxDepth: null,
      minLeaf: 1,
      seed: 's',
    });
    expect(tree.trees[0].feature.length).toBe(1);
    expect(tree.trees[0].thresholdOrValue[0]).toBe(0.1);
  });
});
