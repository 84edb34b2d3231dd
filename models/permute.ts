/**
 * Forest predictions with some features' values taken from other rows, for every permutation of
 * permutation importance at once. A row follows its own path through a tree until the first node
 * that splits on a permuted feature; only from there does each permutation go its own way, so the
 * shared part of the path is walked once instead of once per repeat, and a row whose path never
 * meets a permuted feature adds the same leaf to every repeat.
 *
 * The sums run in tree order per row and are divided by the tree count at the end, as
 * predictUnchecked does, so each result equals predicting the permuted matrix bit for bit.
 *
 * Example: `predictPermuted(forest, x, [3], [order1, order2])[1][i]` is the prediction of row i with
 * feature 3 read from row `order2[i]`.
 */
import type { Matrix } from './checks.js';
import type { Forest } from './forest.js';
import { checkPredictionMatrix } from './predict.js';

export function predictPermuted(f: Forest, x: Matrix, permuted: number[], orders: ArrayLike<number>[]): Float64Array[] {
  checkPredictionMatrix(f, x);
  const p = x.columns.length;
  const rows = x.rows;
  const repeats = orders.length;
  // slot[f] is feature f's place among the permuted columns, -1 when it is not permuted
  const slot = new Int32Array(p).fill(-1);
  permuted.forEach((c, m) => (slot[c] = m));
  const width = permuted.length;
  // row-major, so a row's values share cache lines
  const block = new Float64Array(rows * p);
  for (let j = 0; j < p; j++) {
    const c = x.columns[j];
    for (let r = 0, at = j; r < rows; r++, at += p) block[at] = c[r];
  }
  // per repeat, the permuted values gathered into row order once, so a traversal reads them in
  // sequence instead of jumping to another row for each
  const moved = orders.map((order) => {
    const v = new Float64Array(rows * width);
    for (let i = 0; i < rows; i++) for (let m = 0; m < width; m++) v[i * width + m] = x.columns[permuted[m]][order[i]];
    return v;
  });
  const out = orders.map(() => new Float64Array(rows));
  // Below a node that does not split on a permuted feature, every repeat of a row goes the same way
  // (they differ only in the permuted values), so the repeats walk down together as one set and part
  // only where a node splits on a permuted feature: a set of repeats per pending branch, as a bit mask.
  const grouped = repeats <= 30;
  // pending sets are disjoint and never empty, so there are never more of them than repeats
  const stackNode = new Int32Array(32);
  const stackMask = new Int32Array(32);
  const all = grouped ? (1 << repeats) - 1 : 0;
  for (const tree of f.trees) {
    const { feature, thresholdOrValue: tv, right } = tree;
    for (let i = 0, base = 0; i < rows; i++, base += p) {
      let node = 0;
      let g = feature[0];
      while (g >= 0 && slot[g] < 0) {
        node = block[base + g] <= tv[node] ? node + 1 : right[node];
        g = feature[node];
      }
      if (g < 0) {
        const v = tv[node];
        for (let k = 0; k < repeats; k++) out[k][i] += v;
        continue;
      }
      const at = i * width;
      if (grouped) {
        let top = 0;
        stackNode[0] = node;
        stackMask[0] = all;
        while (top >= 0) {
          let n = stackNode[top];
          let mask = stackMask[top];
          top--;
          for (;;) {
            const h = feature[n];
            if (h < 0) {
              const v = tv[n];
              for (let k = 0; mask !== 0; k++, mask >>>= 1) if (mask & 1) out[k][i] += v;
              break;
            }
            const m = slot[h];
            if (m < 0) {
              n = block[base + h] <= tv[n] ? n + 1 : right[n];
              continue;
            }
            // part the set: the repeats whose value goes left, and the rest
            const t = tv[n];
            let goLeft = 0;
            for (let k = 0, rest = mask; rest !== 0; k++, rest >>>= 1) if (rest & 1 && moved[k][at + m] <= t) goLeft |= 1 << k;
            const goRight = mask & ~goLeft;
            if (goLeft === 0) n = right[n];
            else if (goRight === 0) n = n + 1;
            else {
              top++;
              stackNode[top] = right[n];
              stackMask[top] = goRight;
              n = n + 1;
              mask = goLeft;
            }
          }
        }
        continue;
      }
      for (let k = 0; k < repeats; k++) {
        const mine = moved[k];
        let n = node;
        let h = g;
        while (h >= 0) {
          const m = slot[h];
          n = (m >= 0 ? mine[at + m] : block[base + h]) <= tv[n] ? n + 1 : right[n];
          h = feature[n];
        }
        out[k][i] += tv[n];
      }
    }
  }
  const t = f.trees.length;
  if (t !== 1) for (const o of out) for (let i = 0; i < rows; i++) o[i] /= t;
  return out;
}
