/**
 * A fitted regression tree as flat typed arrays, and allocation-free routing of rows through it.
 *
 * Nodes are numbered in preorder: the root is node 0 and an internal node's left child is always
 * the next node, which lets serialization drop the child pointers. A leaf has `feature === -1`.
 *
 * Example: `predictRow(tree, columns, 4)` is the leaf value that row 4 of `columns` lands in.
 */

export interface Tree {
  /** Split feature (column index) of an internal node; -1 for a leaf. */
  feature: Int32Array;
  /** Rows with `x[feature] <= threshold` go left. NaN for leaves. */
  threshold: Float64Array;
  /** Child node indices; -1 for leaves. */
  left: Int32Array;
  right: Int32Array;
  /** Prediction of a leaf (the weighted mean target of its in-bag rows). NaN for internal nodes. */
  value: Float64Array;
  /**
   * In-bag draws that reached the node (a row drawn twice counts twice): the weights of partial
   * dependence by tree traversal.
   */
  draws: Int32Array;
}

/** The leaf value for row `row` of column-major `columns`. */
export function predictRow(tree: Tree, columns: ArrayLike<number>[], row: number): number {
  const feature = tree.feature;
  const threshold = tree.threshold;
  const left = tree.left;
  const right = tree.right;
  let node = 0;
  let f = feature[0];
  while (f >= 0) {
    node = columns[f][row] <= threshold[node] ? left[node] : right[node];
    f = feature[node];
  }
  return tree.value[node];
}

/**
 * Adds each row's leaf value to `out[row]` (so summing trees in order costs no allocation), for rows
 * `from` (default 0) up to `to` (default `rows`).
 */
export function addTreePredictions(
  tree: Tree,
  columns: ArrayLike<number>[],
  rows: number,
  out: Float64Array,
  from = 0,
  to = rows,
): void {
  const feature = tree.feature;
  const threshold = tree.threshold;
  const left = tree.left;
  const right = tree.right;
  const value = tree.value;
  const root = feature[0];
  for (let r = from; r < to; r++) {
    let node = 0;
    let f = root;
    while (f >= 0) {
      node = columns[f][r] <= threshold[node] ? left[node] : right[node];
      f = feature[node];
    }
    out[r] += value[node];
  }
}

/** Depth of the deepest leaf (the root alone has depth 0). */
export function treeDepth(tree: Tree): number {
  const n = tree.feature.length;
  const depth = new Int32Array(n);
  let max = 0;
  for (let i = 0; i < n; i++) {
    if (tree.feature[i] >= 0) {
      depth[tree.left[i]] = depth[i] + 1;
      depth[tree.right[i]] = depth[i] + 1;
    } else if (depth[i] > max) max = depth[i];
  }
  return max;
}
