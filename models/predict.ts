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
  result.fill(0);
  const p = columns.length;
  const trees = f.trees;
  const block = new Float64Array(Math.min(rows, BLOCK_ROWS) * p);
  for (let from = 0; from < rows; from += BLOCK_ROWS) {
    const to = Math.min(rows, from + BLOCK_ROWS);
    for (let j = 0; j < p; j++) {
      const c = columns[j];
      for (let r = from, at = j; r < to; r++, at += p) block[at] = c[r];
    }
    for (let t = 0; t < trees.length; t++) addLeafValues(trees[t], block, p, from, to, result);
  }
  const t = f.trees.length;
  if (t !== 1) for (let r = 0; r < rows; r++) result[r] /= t;
  return result;
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
