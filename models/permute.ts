/**
 * Forest predictions with some features' values taken from other rows, for every permutation of
 * permutation importance at once. Each row walks its own path down a tree once; a job (one
 * predictor's columns) whose columns no node of that path splits on gives every repeat the path's
 * leaf, and only from the first node that splits on a job's column does each repeat of that job go
 * its own way. Repeats still walk together below it until a split on the job's column parts them,
 * and those that keep to the row's path follow its recorded nodes to its leaf without walking them
 * again. So the shared part of a path is walked once for all jobs and repeats, not once per repeat.
 *
 * The sums run in tree order per row and are divided by the tree count at the end, as
 * predictUnchecked does, so each result equals predicting the permuted matrix bit for bit, and a
 * row's results do not depend on the rows computed with it (permute-pool.ts splits rows over threads).
 *
 * Example: `predictPermuted(forest, x, [3], [order1, order2])[1][i]` is the prediction of row i with
 * feature 3 read from row `order2[i]`.
 */
import type { Matrix } from './checks.js';
import type { Forest } from './forest.js';
import { checkPredictionMatrix } from './predict.js';

/** One job's permuted predictions: every repeat of one set of columns. */
export function predictPermuted(f: Forest, x: Matrix, permuted: number[], orders: ArrayLike<number>[]): Float64Array[] {
  checkPredictionMatrix(f, x);
  const out = orders.map(() => new Float64Array(x.rows));
  predictPermutedRows(f, x, [{ columns: permuted }], [orders], 0, x.rows, [out]);
  return out;
}

/**
 * Writes `out[job][k][i]`, the prediction of row i with job `job`'s columns read from row
 * `orders[job][k][i]`, for rows from..to-1 and every job and repeat (inputs checked by the caller;
 * the jobs' columns must not overlap).
 */
export function predictPermutedRows(
  f: Forest,
  x: Matrix,
  jobs: { columns: number[] }[],
  orders: ArrayLike<number>[][],
  from: number,
  to: number,
  out: Float64Array[][],
): void {
  const p = x.columns.length;
  const n = to - from;
  // jobOf[f] is the job permuting feature f, -1 for none; slotOf[f] its place among the job's columns
  const jobOf = new Int32Array(p).fill(-1);
  const slotOf = new Int32Array(p);
  jobs.forEach((job, m) =>
    job.columns.forEach((c, s) => {
      jobOf[c] = m;
      slotOf[c] = s;
    }),
  );
  // row-major, so a row's values share cache lines
  const block = new Float64Array(n * p);
  for (let j = 0; j < p; j++) {
    const c = x.columns[j];
    for (let r = from, at = j; r < to; r++, at += p) block[at] = c[r];
  }
  // per job, the permuted values gathered once into row order, a row's repeats side by side
  // ([row][repeat][column]), so a walk reads them in sequence instead of jumping between arrays
  const moved = jobs.map((job, m) => {
    const w = job.columns.length;
    const reps = orders[m].length;
    const v = new Float64Array(n * reps * w);
    orders[m].forEach((order, k) => {
      for (let i = 0; i < n; i++) for (let s = 0; s < w; s++) v[(i * reps + k) * w + s] = x.columns[job.columns[s]][order[from + i]];
    });
    return v;
  });
  // per job, the sums of a row's repeats side by side ([row][repeat]), copied out at the end
  const sums = jobs.map((_, m) => new Float64Array(n * orders[m].length));
  const walker = new RepeatWalker();
  // the row's path (its nodes from the root to its leaf), and per job the places on it of the first
  // and the last node that split on one of the job's columns (-1: none)
  let path: Int32Array = new Int32Array(64);
  const first = new Int32Array(jobs.length);
  const last = new Int32Array(jobs.length);
  for (const tree of f.trees) {
    const { feature, thresholdOrValue: tv, right } = tree;
    for (let i = 0; i < n; i++) {
      const base = i * p;
      first.fill(-1);
      let node = 0;
      let depth = 0;
      let g = feature[0];
      while (g >= 0) {
        if (depth + 1 >= path.length) path = grown(path);
        path[depth] = node;
        const m = jobOf[g];
        if (m >= 0) {
          if (first[m] < 0) first[m] = depth;
          last[m] = depth;
        }
        node = block[base + g] <= tv[node] ? node + 1 : right[node];
        g = feature[node];
        depth++;
      }
      path[depth] = node;
      const leaf = tv[node];
      for (let m = 0; m < jobs.length; m++) {
        const reps = orders[m].length;
        const sum = sums[m];
        if (first[m] < 0) {
          for (let k = 0, at = i * reps; k < reps; k++, at++) sum[at] += leaf;
        } else walker.walk(tree, block, base, jobOf, slotOf, m, moved[m], reps, jobs[m].columns.length, i, path, first[m], last[m], leaf, sum);
      }
    }
  }
  const t = f.trees.length;
  sums.forEach((sum, m) => {
    const reps = orders[m].length;
    out[m].forEach((o, k) => {
      for (let i = 0; i < n; i++) o[from + i] = t === 1 ? sum[i * reps + k] : sum[i * reps + k] / t;
    });
  });
}

/**
 * Walks one row's repeats of one job down a tree, adding each repeat's leaf value to its sum.
 *
 * The repeats start together on the row's own path, at its first split on the job's columns, and
 * follow the path (read from the recorded list of its nodes, not walked again) as long as their
 * values go the row's way. At each split on the job's columns the repeats that go the other way
 * leave it as a set, which walks its own subtree (walkSets). Past the path's last such split nothing
 * can part the repeats still on it, so they end in the row's leaf.
 */
class RepeatWalker {
  // pending sets are disjoint and never empty, so there are never more of them than repeats
  private stackNode = new Int32Array(32);
  private stackMask = new Int32Array(32);

  /**
   * `moved` holds the job's permuted values as [row][repeat][column] (`width` columns), `sums` the
   * sums as [row][repeat]; `path` is row i's path, `start` and `end` the places on it of its first
   * and last split on the job's columns, `leaf` the path's leaf value.
   */
  walk(
    tree: Forest['trees'][number],
    block: Float64Array,
    base: number,
    jobOf: Int32Array,
    slotOf: Int32Array,
    job: number,
    moved: Float64Array,
    repeats: number,
    width: number,
    i: number,
    path: Int32Array,
    start: number,
    end: number,
    leaf: number,
    sums: Float64Array,
  ): void {
    const { feature, thresholdOrValue: tv, right } = tree;
    const at = i * repeats;
    if (repeats > 30) {
      // too many repeats for a bit mask: each walks alone
      for (let k = 0; k < repeats; k++) {
        const mine = (at + k) * width;
        let n = path[start];
        let h = feature[n];
        while (h >= 0) {
          n = (jobOf[h] === job ? moved[mine + slotOf[h]] : block[base + h]) <= tv[n] ? n + 1 : right[n];
          h = feature[n];
        }
        sums[at + k] += tv[n];
      }
      return;
    }
    let mask = repeats === 0 ? 0 : (1 << repeats) - 1;
    for (let q = start; q <= end; q++) {
      const n = path[q];
      const h = feature[n];
      if (jobOf[h] !== job) continue;
      const goLeft = goingLeft(moved, at, width, slotOf[h], mask, tv[n]);
      const ownLeft = path[q + 1] === n + 1;
      const off = mask & (ownLeft ? ~goLeft : goLeft);
      if (off !== 0) {
        this.walkSets(tree, block, base, jobOf, slotOf, job, moved, width, at, ownLeft ? right[n] : n + 1, off, sums);
        mask &= ~off;
        if (mask === 0) return;
      }
    }
    addToSet(sums, at, mask, leaf);
  }

  /**
   * Walks a set of repeats (a bit mask) from a node. Below a node that does not split on the job's
   * columns every repeat of the row goes the same way (they differ only in those columns), so the
   * repeats walk down together as one set and part only where a node splits on one of them: a set
   * of repeats per pending branch.
   */
  private walkSets(
    tree: Forest['trees'][number],
    block: Float64Array,
    base: number,
    jobOf: Int32Array,
    slotOf: Int32Array,
    job: number,
    moved: Float64Array,
    width: number,
    at: number,
    start: number,
    all: number,
    sums: Float64Array,
  ): void {
    const { feature, thresholdOrValue: tv, right } = tree;
    const stackNode = this.stackNode;
    const stackMask = this.stackMask;
    let top = 0;
    stackNode[0] = start;
    stackMask[0] = all;
    while (top >= 0) {
      let n = stackNode[top];
      let mask = stackMask[top];
      top--;
      for (;;) {
        const h = feature[n];
        if (h < 0) {
          addToSet(sums, at, mask, tv[n]);
          break;
        }
        if (jobOf[h] !== job) {
          n = block[base + h] <= tv[n] ? n + 1 : right[n];
          continue;
        }
        // part the set: the repeats whose value goes left, and the rest
        const goLeft = goingLeft(moved, at, width, slotOf[h], mask, tv[n]);
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
  }
}

function grown(a: Int32Array): Int32Array {
  const b = new Int32Array(a.length * 2);
  b.set(a);
  return b;
}

/**
 * The repeats of `mask` whose value (`moved[(at + k) * width + slot]` for repeat k) goes left at a
 * threshold `t`, as a mask. Branch-free: whether a repeat goes left is a coin toss the processor
 * cannot predict. Reads only the repeats from the mask's lowest to its highest.
 */
function goingLeft(moved: Float64Array, at: number, width: number, slot: number, mask: number, t: number): number {
  let left = 0;
  for (let k = lowest(mask), stop = highest(mask), s = (at + k) * width + slot; k < stop; k++, s += width) left |= +(moved[s] <= t) << k;
  return left & mask;
}

/** The place of a mask's lowest set bit (the mask is not 0). */
function lowest(mask: number): number {
  return 31 - Math.clz32(mask & -mask);
}

/** One past the place of a mask's highest set bit. */
function highest(mask: number): number {
  return 32 - Math.clz32(mask);
}

/**
 * Adds `v` to the sums of the repeats in `mask` (`sums[at + k]` for each set bit k), without a branch
 * per repeat: a repeat outside the set adds 0 × v, which leaves its sum as it was (a sum starts at +0
 * and so is never -0). Not for a value that is not finite, where 0 × v would be NaN.
 */
function addToSet(sums: Float64Array, at: number, mask: number, v: number): void {
  if (!Number.isFinite(v)) {
    for (let k = at; mask !== 0; k++, mask >>>= 1) if (mask & 1) sums[k] += v;
    return;
  }
  for (let k = lowest(mask), stop = highest(mask); k < stop; k++) sums[at + k] += ((mask >>> k) & 1) * v;
}
