/**
 * A fitted regression tree as flat typed arrays.
 *
 * Nodes are numbered in preorder: the root is node 0 and an internal node's left child is always
 * the next node, so only the right child is kept. A leaf has `feature === -1`. A node takes 20
 * bytes: its feature, its threshold or value, its right child and its draws.
 *
 * Example: `rightChildren(Int32Array.of(0, -1, -1))` is `Int32Array [2, -1, -1]`: a root splitting on
 * feature 0, its left leaf (node 1) and its right leaf (node 2).
 */

export interface Tree {
  /** Split feature (column index) of an internal node; -1 for a leaf. */
  feature: Int32Array;
  /**
   * An internal node's threshold (rows with `x[feature] <= threshold` go left, to the next node), or
   * a leaf's prediction (the weighted mean target of its in-bag rows).
   */
  thresholdOrValue: Float64Array;
  /** Right child of an internal node (its left child is the next node); -1 for a leaf. */
  right: Int32Array;
  /**
   * In-bag draws that reached the node (a row drawn twice counts twice): the weights of partial
   * dependence by tree traversal.
   */
  draws: Int32Array;
}

/**
 * The right children of a tree given by its features in preorder (-1 for leaves), or the reason
 * the features are not a whole tree in preorder. `into`, if given, receives them.
 */
export function rightChildren(feature: ArrayLike<number>, into?: Int32Array): Int32Array | string {
  const count = feature.length;
  const right = into ?? new Int32Array(count);
  // pending internal nodes whose right child is the next node not yet placed
  const stack = new Int32Array(count + 1);
  let top = 0;
  for (let i = 0; i < count; i++) {
    if (i > 0 && feature[i - 1] < 0) {
      if (top === 0) return 'has nodes after its last leaf';
      right[stack[--top]] = i;
    }
    if (feature[i] >= 0) stack[top++] = i;
    else right[i] = -1;
  }
  if (count === 0 || top > 0) return 'is incomplete';
  return right;
}

/** Depth of the deepest leaf (the root alone has depth 0). */
export function treeDepth(tree: Tree): number {
  const n = tree.feature.length;
  const depth = new Int32Array(n);
  let max = 0;
  for (let i = 0; i < n; i++) {
    if (tree.feature[i] >= 0) {
      depth[i + 1] = depth[i] + 1;
      depth[tree.right[i]] = depth[i] + 1;
    } else if (depth[i] > max) max = depth[i];
  }
  return max;
}
