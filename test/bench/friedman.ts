/**
 * Friedman #1 regression data (Friedman 1991, "Multivariate adaptive regression splines", Annals of
 * Statistics 19(1), eq. 43): ten independent uniform(0, 1) predictors, of which only x1..x5 matter,
 *   y = 10 sin(π x1 x2) + 20 (x3 − 0.5)² + 10 x4 + 5 x5 + ε,  ε ~ N(0, 1).
 * Generated from dendrolog's own seeded generator so the numbers are the same on every machine.
 *
 * Example: `const { x, y } = friedman1(1000, 'train')`
 */
import type { Matrix } from '../../models/forest.js';
import { rngFor } from '../../models/rng.js';

export const FRIEDMAN_NAMES = ['x1', 'x2', 'x3', 'x4', 'x5', 'x6', 'x7', 'x8', 'x9', 'x10'];

/** The noise-free Friedman #1 function. */
export function friedmanMean(x1: number, x2: number, x3: number, x4: number, x5: number): number {
  return 10 * Math.sin(Math.PI * x1 * x2) + 20 * (x3 - 0.5) ** 2 + 10 * x4 + 5 * x5;
}

/** `rows` rows of Friedman #1 with noise sd `noise` (default 1), seeded by `seed`. */
export function friedman1(rows: number, seed: string, noise = 1): { x: Matrix; y: Float64Array } {
  const g = rngFor(seed, 'friedman1');
  const columns = FRIEDMAN_NAMES.map(() => new Float64Array(rows));
  const y = new Float64Array(rows);
  for (let r = 0; r < rows; r++) {
    for (let f = 0; f < 10; f++) columns[f][r] = g.float();
    // Box–Muller; 1 − u keeps the logarithm's argument in (0, 1].
    const u = 1 - g.float();
    const v = g.float();
    const eps = Math.sqrt(-2 * Math.log(u)) * Math.cos(2 * Math.PI * v);
    y[r] = friedmanMean(columns[0][r], columns[1][r], columns[2][r], columns[3][r], columns[4][r]) + noise * eps;
  }
  return { x: { columns, names: [...FRIEDMAN_NAMES], rows }, y };
}
