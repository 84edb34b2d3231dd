/**
 * Permutation importance (Breiman 2001): how much the held-out mean squared error grows when one
 * feature's values are shuffled across rows, breaking its link to the target while keeping its
 * distribution. Repeated with independent seeded shuffles; mean and sample standard deviation of the
 * increase are returned per feature.
 *
 * Example:
 * ```ts
 * const { mean, sd } = permutationImportance(forest, heldOutX, heldOutY, { repeats: 10, seed: 's' });
 * ```
 */
import { checkInteger, checkTarget, type Matrix } from './checks.js';
import { EngineInputError, engineMessages as msg } from './engine-errors.js';
import type { Forest } from './forest.js';
import { checkPredictionMatrix, predictUnchecked } from './predict.js';
import { rngFor } from './rng.js';

/**
 * Per feature, the increase in MSE on (x, y) when that feature is permuted: `mean` over `repeats`
 * shuffles and their `sd` (n - 1 denominator; NaN when repeats = 1). Shuffle r of feature j uses the
 * generator of SHA-256(`${seed}|perm|${j}|${r}`), so results do not depend on evaluation order.
 * The caller's arrays are not modified.
 */
export function permutationImportance(
  f: Forest,
  x: Matrix,
  y: Float64Array,
  opts: { repeats: number; seed: string },
): { mean: Float64Array; sd: Float64Array } {
  checkPredictionMatrix(f, x);
  if (y.length !== x.rows) throw new EngineInputError(msg.targetLengthHeldOut(y.length, x.rows));
  checkTarget(y, x.rows);
  const repeats = checkInteger('repeats', opts.repeats, 1);
  if (typeof opts.seed !== 'string') throw new EngineInputError(msg.seed(opts.seed));
  const n = x.rows;
  const p = x.columns.length;
  const pred = predictUnchecked(f, x.columns, n);
  const base = mse(y, pred);
  const columns = x.columns.slice();
  const shuffled = new Float64Array(n);
  const increase = new Float64Array(repeats);
  const mean = new Float64Array(p);
  const sd = new Float64Array(p);
  for (let j = 0; j < p; j++) {
    for (let rep = 0; rep < repeats; rep++) {
      shuffled.set(x.columns[j]);
      const rng = rngFor(opts.seed, 'perm', j, rep);
      for (let i = n - 1; i > 0; i--) {
        const k = rng.int(i + 1);
        const t = shuffled[i];
        shuffled[i] = shuffled[k];
        shuffled[k] = t;
      }
      columns[j] = shuffled;
      predictUnchecked(f, columns, n, pred);
      increase[rep] = mse(y, pred) - base;
    }
    columns[j] = x.columns[j];
    let s = 0;
    for (let rep = 0; rep < repeats; rep++) s += increase[rep];
    const m = s / repeats;
    let ss = 0;
    for (let rep = 0; rep < repeats; rep++) ss += (increase[rep] - m) ** 2;
    mean[j] = m;
    sd[j] = repeats > 1 ? Math.sqrt(ss / (repeats - 1)) : NaN;
  }
  return { mean, sd };
}

function mse(y: Float64Array, pred: Float64Array): number {
  let s = 0;
  for (let i = 0; i < y.length; i++) {
    const e = y[i] - pred[i];
    s += e * e;
  }
  return y.length > 0 ? s / y.length : NaN;
}
