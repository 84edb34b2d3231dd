/**
 * Forest prediction: the mean of the trees' leaf values, summed in tree order.
 *
 * For speed, rows are copied into row-major blocks (a row's values then share cache lines).
 *
 * Example: `predictUnchecked(forest, x.columns, x.rows)` after `checkPredictionMatrix(forest, x)`.
 */
import { checkMatrix, type Matrix } from './checks.js';
import { EngineInputError, engineMessages as msg } from './engine-errors.js';
import type { Forest } from './forest.js';
import type { Tree } from './tree.js';

/** Throws unless `x` has the forest's feature names, in order, and only finite values. */
export function checkPredictionMatrix(f: Forest, x: Matrix): void {
  const same = x.names.length === f.featureNames.length && x.names.every((name, i) => name === f.featureNames[i]);
  if (!same) throw new EngineInputError(msg.namesDiffer(f.featureNames, x.names));
  checkMatrix(x);
}

/** Rows per row-major block (a block of 10 features is 640 KiB). */
const BLOCK_ROWS = 8192;

/**
 * Prediction without input checks, for callers that checked once (e.g. permutation importance).
 * `out`, if given, is overwritten and returned.
 */
export function predictUnchecked(f: Forest, columns: Float64Array[], rows: number, out?: Float64Array): Float64Array {
  const result = out ?? new Float64Array(rows);
  predictRows(f, columns, 0, rows, result);
  return result;
}

/**
 * Writes the predictions of rows from..to-1 into `out[from..to)`, each the sum of its leaf values in
 * tree order divided by the tree count: a row's prediction does not depend on the range it is
 * predicted in (predict-pool.ts splits rows over threads).
 */
export function predictRows(f: Forest, columns: ArrayLike<number>[], from: number, to: number, out: Float64Array): void {
  const p = columns.length;
  const trees = f.trees;
  const t = trees.length;
  const block = new Float64Array(Math.max(0, Math.min(to - from, BLOCK_ROWS)) * p);
  for (let start = from; start < to; start += BLOCK_ROWS) {
    const end = Math.min(to, start + BLOCK_ROWS);
    out.fill(0, start, end);
    for (let j = 0; j < p; j++) {
      const c = columns[j];
      for (let r = start, at = j; r < end; r++, at += p) block[at] = c[r];
    }
    for (let k = 0; k < t; k++) addLeafValues(trees[k], block, p, start, end, out);
    if (t !== 1) for (let r = start; r < end; r++) out[r] /= t;
  }
}

/** Adds the leaf value of rows from..to-1 (row-major in `block`, starting at row `from`) to `out`. */
function addLeafValues(tree: Tree, block: Float64Array, p: number, from: number, to: number, out: Float64Array): void {
  const { feature, thresholdOrValue: tv, right } = tree;
  const root = feature[0];
  for (let r = from, base = 0; r < to; r++, base += p) {
    let node = 0;
    let f = root;
    while (f >= 0) {
      node = block[base + f] <= tv[node] ? node + 1 : right[node];
      f = feature[node];
    }
    out[r] += tv[node];
  }
}
