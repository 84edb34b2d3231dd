/**
 * Forest prediction: the mean of the trees' leaf values, summed in tree order without allocating
 * beyond the output array.
 *
 * Example: `predictUnchecked(forest, x.columns, x.rows)` after `checkPredictionMatrix(forest, x)`.
 */
import { checkMatrix, type Matrix } from './checks.js';
import { EngineInputError, engineMessages as msg } from './engine-errors.js';
import type { Forest } from './forest.js';
import { addTreePredictions } from './tree.js';

/** Throws unless `x` has the forest's feature names, in order, and only finite values. */
export function checkPredictionMatrix(f: Forest, x: Matrix): void {
  const same = x.names.length === f.featureNames.length && x.names.every((name, i) => name === f.featureNames[i]);
  if (!same) throw new EngineInputError(msg.namesDiffer(f.featureNames, x.names));
  checkMatrix(x);
}

/**
 * Prediction without input checks, for callers that checked once (e.g. permutation importance).
 * `out`, if given, is overwritten and returned.
 */
export function predictUnchecked(f: Forest, columns: Float64Array[], rows: number, out?: Float64Array): Float64Array {
  const result = out ?? new Float64Array(rows);
  result.fill(0);
  for (const tree of f.trees) addTreePredictions(tree, columns, rows, result);
  const t = f.trees.length;
  if (t !== 1) for (let r = 0; r < rows; r++) result[r] /= t;
  return result;
}
