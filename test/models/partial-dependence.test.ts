/**
 * Partial dependence by weighted tree traversal (Friedman 2001, Ann. Statist. 29(5), §8.2) against
 * its definition, the brute-force average: set the predictor to each grid value in every training
 * row, predict, average. The two agree exactly when the rows reaching any node have the same mix
 * of the other predictors' values whatever the predictor's value, which a full factorial design
 * guarantees (every combination of levels once); so the data here is one, and the models see every
 * row once (a decision tree, and a forest without bootstrap).
 */
import { describe, expect, it } from 'vitest';
import { fitDecisionTree, fitForest, predictForest, type Forest, type Matrix } from '../../models/forest.js';
import { forestPartialDependence } from '../../models/partial-dependence.js';
import { deserializeForest, serializeForest } from '../../models/serialize.js';

/** Every combination of 6 × 5 × 4 levels; y depends on all three with an interaction. */
function factorial(): { x: Matrix; y: Float64Array } {
  const a: number[] = [];
  const b: number[] = [];
  const c: number[] = [];
  for (let i = 0; i < 6; i++) {
    for (let j = 0; j < 5; j++) {
      for (let k = 0; k < 4; k++) {
        a.push(i);
        b.push(j * 0.5);
        c.push(k % 2 === 0 ? 1 : 0);
      }
    }
  }
  const y = Float64Array.from(a, (v, r) => Math.sin(v) * 3 + b[r] * b[r] + (c[r] === 1 ? v : -v) + ((r * 7919) % 13) / 13);
  return { x: { columns: [Float64Array.from(a), Float64Array.from(b), Float64Array.from(c)], names: ['a', 'b', 'c'], rows: a.length }, y };
}

function bruteForce(f: Forest, x: Matrix, columns: number[], points: number[][]): number[] {
  return points.map((pt) => {
    const moved = x.columns.slice();
    columns.forEach((col, m) => (moved[col] = new Float64Array(x.rows).fill(pt[m])));
    const p = predictForest(f, { ...x, columns: moved });
    return p.reduce((s, v) => s + v, 0) / p.length;
  });
}

describe('partial dependence by tree traversal', () => {
  const { x, y } = factorial();
  const grid = [[-1], [0], [0.5], [1.5], [2.2], [3], [4.9], [7]];

  it('equals the brute-force average over the training rows for a decision tree, for each predictor', async () => {
    const tree = await fitDecisionTree(x, y, { maxDepth: null, minLeaf: 2, seed: 'pd-tree' });
    for (const col of [0, 1, 2]) {
      const got = forestPartialDependence(tree, [col], grid);
      bruteForce(tree, x, [col], grid).forEach((v, g) => expect(got[g]).toBeCloseTo(v, 12));
    }
  });

  it('equals the brute-force average for a forest grown without bootstrap, also after a round trip through its bytes', async () => {
    const forest = await fitForest(x, y, { trees: 25, maxDepth: 6, minLeaf: 2, mtry: 1, replace: false, sampleFraction: 1, seed: 'pd-forest' });
    const read = deserializeForest(serializeForest(forest));
    const got = forestPartialDependence(read, [0], grid);
    bruteForce(forest, x, [0], grid).forEach((v, g) => expect(got[g]).toBeCloseTo(v, 12));
  });

  it('sets several columns at once, as for the indicator columns of one category', async () => {
    // b and c stand for two indicator-like columns set together at each point
    const tree = await fitDecisionTree(x, y, { maxDepth: null, minLeaf: 2, seed: 'pd-pair' });
    const pairs = [[0, 0], [0, 1], [1, 0], [2, 1]];
    const got = forestPartialDependence(tree, [1, 2], pairs);
    bruteForce(tree, x, [1, 2], pairs).forEach((v, g) => expect(got[g]).toBeCloseTo(v, 12));
  });

  it('weights a bootstrap forest by each tree’s draws: close to, not equal to, the average over all rows', async () => {
    const forest = await fitForest(x, y, { trees: 200, maxDepth: null, minLeaf: 2, mtry: 2, seed: 'pd-boot' });
    const got = forestPartialDependence(forest, [0], grid);
    const brute = bruteForce(forest, x, [0], grid);
    const spread = Math.max(...brute) - Math.min(...brute);
    brute.forEach((v, g) => expect(Math.abs(got[g] - v)).toBeLessThan(0.1 * spread));
    expect(got.some((v, g) => Math.abs(v - brute[g]) > 1e-9)).toBe(true);
  });

  it('returns nothing for no points', async () => {
    const tree = await fitDecisionTree(x, y, { maxDepth: 2, minLeaf: 2, seed: 'pd-none' });
    expect(forestPartialDependence(tree, [0], []).length).toBe(0);
  });
});
