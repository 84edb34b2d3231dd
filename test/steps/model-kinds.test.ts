import { describe, expect, it } from 'vitest';
import { modelKinds } from '../../steps/model-kinds.js';

/** 40 rows × p columns of small integers, and a target that depends on the first two. */
function matrix(p: number) {
  const rows = 40;
  const columns = Array.from({ length: p }, (_, j) => Float64Array.from({ length: rows }, (_, i) => ((i * (j + 3)) % 7) + (j === 0 ? i : 0)));
  const y = Float64Array.from({ length: rows }, (_, i) => columns[0][i] + 2 * columns[1][i]);
  return { x: { columns, names: columns.map((_, j) => `x${j}`), rows }, y };
}

const cell = { trees: 3, max_depth: 2, min_leaf: 3, sample_fraction: 1, replace: true };

describe('the random forest adapter', () => {
  it('records the mtry count the engine used: 0.29 of 100 predictors is 29 (0.29 × 100 is 28.999… in floating point)', async () => {
    const { x, y } = matrix(100);
    const fitted = await modelKinds.random_forest.fit(x, y, { ...cell, mtry: 0.29 }, { seed: 's', workers: 1 });
    expect(fitted.used.mtry).toBe(29);
  });

  it('records a third of the predictors, rounded down, for mtry null', async () => {
    const { x, y } = matrix(10);
    const fitted = await modelKinds.random_forest.fit(x, y, { ...cell, mtry: null }, { seed: 's', workers: 1 });
    expect(fitted.used.mtry).toBe(3);
  });
});
