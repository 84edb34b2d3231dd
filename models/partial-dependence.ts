/**
 * Partial dependence of a forest (or one tree) on one predictor by weighted tree traversal
 * (Friedman 2001, "Greedy function approximation", Ann. Statist. 29(5), §8.2), with no per-row
 * prediction: each tree is walked once for all grid points. At a node that splits on one of the
 * predictor's columns a point follows its own value; at any other node it goes both ways, each
 * child weighted by its share of the node's in-bag draws. A leaf adds its value times the weight
 * that reached it. The result is the tree's prediction averaged over its in-bag rows with the
 * predictor set to the point's value (exactly, when the other predictors' values do not depend on
 * the predictor's, as in a full factorial design; see test/models/partial-dependence.test.ts), and
 * the forest's is the mean over its trees.
 *
 * Example: `forestPartialDependence(forest, [3], [[0.1], [0.5], [0.9]])` is the forest's average
 * prediction with feature 3 set to 0.1, 0.5 and 0.9 in turn.
 */
import type { Forest } from './forest.js';

/**
 * `columns` are the predictor's feature indices (one for a number, several for a one-hot
 * category); `points[g][m]` is grid point g's value of `columns[m]`.
 */
export function forestPartialDependence(f: Forest, columns: number[], points: ArrayLike<number>[]): Float64Array {
  const grid = points.length;
  const out = new Float64Array(grid);
  if (grid === 0) return out;
  const slot = new Int32Array(f.featureNames.length).fill(-1);
  columns.forEach((c, m) => (slot[c] = m));
  const width = columns.length;
  const value = new Float64Array(grid * width);
  points.forEach((pt, g) => {
    for (let m = 0; m < width; m++) value[g * width + m] = pt[m];
  });
  // The points that reach a pending node are a segment of `order`; a split on the predictor
  // partitions the segment in place, any other split hands the same segment to both children.
  // Segments are nested or disjoint, so reordering inside one never changes another's set.
  const order = new Int32Array(grid);
  const perTree = new Float64Array(grid);
  let stackNode: Int32Array = new Int32Array(64);
  let stackFrom: Int32Array = new Int32Array(64);
  let stackTo: Int32Array = new Int32Array(64);
  let stackWeight: Float64Array = new Float64Array(64);
  for (const tree of f.trees) {
    const { feature, thresholdOrValue: tv, right, draws } = tree;
    for (let g = 0; g < grid; g++) order[g] = g;
    perTree.fill(0);
    let top = 0;
    stackNode[0] = 0;
    stackFrom[0] = 0;
    stackTo[0] = grid;
    stackWeight[0] = 1;
    while (top >= 0) {
      let node = stackNode[top];
      const from = stackFrom[top];
      let to = stackTo[top];
      let weight = stackWeight[top];
      top--;
      for (;;) {
        const h = feature[node];
        if (h < 0) {
          const v = weight * tv[node];
          for (let k = from; k < to; k++) perTree[order[k]] += v;
          break;
        }
        const l = node + 1;
        const r = right[node];
        const m = slot[h];
        if (top + 2 >= stackNode.length) {
          stackNode = grownInt(stackNode);
          stackFrom = grownInt(stackFrom);
          stackTo = grownInt(stackTo);
          stackWeight = grownFloat(stackWeight);
        }
        if (m < 0) {
          // both ways, by the children's shares of the node's draws
          const total = draws[node];
          top++;
          stackNode[top] = r;
          stackFrom[top] = from;
          stackTo[top] = to;
          stackWeight[top] = (weight * draws[r]) / total;
          weight = (weight * draws[l]) / total;
          node = l;
          continue;
        }
        // the points whose value goes left first, then the rest
        const t = tv[node];
        let split = from;
        for (let k = from; k < to; k++) {
          const g = order[k];
          if (value[g * width + m] <= t) {
            order[k] = order[split];
            order[split] = g;
            split++;
          }
        }
        if (split < to) {
          if (split === from) {
            node = r;
            continue;
          }
          top++;
          stackNode[top] = r;
          stackFrom[top] = split;
          stackTo[top] = to;
          stackWeight[top] = weight;
        }
        to = split;
        node = l;
      }
    }
    for (let g = 0; g < grid; g++) out[g] += perTree[g];
  }
  const t = f.trees.length;
  for (let g = 0; g < grid; g++) out[g] /= t;
  return out;
}

function grownInt(a: Int32Array): Int32Array {
  const b = new Int32Array(a.length * 2);
  b.set(a);
  return b;
}

function grownFloat(a: Float64Array): Float64Array {
  const b = new Float64Array(a.length * 2);
  b.set(a);
  return b;
}
