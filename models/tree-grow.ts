/**
 * Growing one CART regression tree (squared error) from binned predictors.
 *
 * A TreeBuilder is made once per thread and grows many trees, reusing its scratch arrays, so growing
 * a tree allocates only the finished tree and its out-of-bag results.
 *
 * How a node's split is found:
 * - Large nodes (in-bag weight >= `denseMinWeight`) keep a histogram (sum of weight × centred target
 *   and sum of weight, per bin) of every feature. Only the smaller child's histogram is built, while
 *   its rows are partitioned; the larger child's is the parent's minus the smaller's, done in place.
 *   Histograms cover every feature, not just the mtry sampled ones, because the children sample their
 *   own features afresh (Breiman samples at every split) and subtraction needs the parent's histogram
 *   of whatever the child samples.
 * - Small nodes scan their rows per sampled feature into a sparse histogram: a 256-bit occupancy mask
 *   marks the bins seen, and the bins are visited in order by walking the set bits, so a node of ten
 *   rows never clears or scans 256 bins.
 *
 * Rows are kept as an index array partitioned stably in place, so every node's rows are ascending and
 * reads of the row-major bin codes move forward through memory.
 *
 * Example: `new TreeBuilder(data, params).grow(0)` grows tree 0 of the forest.
 */
import { midpoint } from './binning.js';
import { rngFor } from './rng.js';
import { predictRow, type Tree } from './tree.js';

/** The training data as the builder sees it (plain or SharedArrayBuffer-backed arrays). */
export interface GrowData {
  rows: number;
  features: number;
  codes: Uint8Array;
  nBins: Int32Array;
  offsets: Int32Array;
  binMin: Float64Array;
  binMax: Float64Array;
  /** Target as given: leaf values are means of these, so a one-row leaf predicts its target exactly. */
  y: Float64Array;
  /** Target minus its mean: split search sums these, which keeps the sums small and the gains accurate. */
  yc: Float64Array;
  /** Raw predictor columns, used only to route out-of-bag rows with the same thresholds as prediction. */
  raw: Float64Array[];
}

/** Resolved per-tree settings (already checked). */
export interface GrowParams {
  /** null: unlimited. The root has depth 0, so maxDepth d allows at most 2^d leaves. */
  maxDepth: number | null;
  /** Minimum in-bag weight (number of draws, counting repeats) in a leaf. */
  minLeaf: number;
  /** Features sampled at every split; equal to the feature count means all, in column order. */
  mtry: number;
  /** Draws per tree. */
  sampleSize: number;
  /** Draw with replacement (bootstrap). Without replacement and sampleSize = rows, every row is used once. */
  replace: boolean;
  seed: string;
  /** Nodes with at least this much in-bag weight use histograms; smaller ones scan rows. */
  denseMinWeight?: number;
}

/** One grown tree with what the forest combines across trees. */
export interface GrownTree {
  tree: Tree;
  /** Per feature: decrease in in-bag squared error from its splits, divided by the tree's in-bag weight. */
  importance: Float64Array;
  /** Out-of-bag rows (ascending) and this tree's prediction for each. */
  oobRows: Int32Array;
  oobValues: Float64Array;
}

/**
 * Below this node weight the sparse row scan beats keeping full histograms. Measured on Friedman #1
 * (10 features) with `node --cpu-prof`; the cost of a histogram node grows with the total bin count
 * and the cost of a row scan with mtry, so it is scaled by bins per sampled feature.
 */
export function defaultDenseMinWeight(totalBins: number, mtry: number): number {
  return Math.max(64, Math.round((1.5 * totalBins) / Math.max(1, mtry)));
}

/** Relative gain below which a split is treated as rounding noise (e.g. in a node whose targets are all equal). */
const REL_TOL = 1e-13;
const UNLIMITED_DEPTH = 0x7fffffff;

export class TreeBuilder {
  private readonly d: GrowData;
  private readonly prm: GrowParams;
  private readonly maxDepth: number;
  private readonly denseMin: number;
  private readonly totalBins: number;
  private readonly counts: Int32Array;
  /** Rows of the current nodes in [0, rows); [rows, 2 rows) is scratch for stable partitioning. */
  private readonly idx: Int32Array;
  private readonly w: Float64Array;
  private readonly wy: Float64Array;
  private readonly perm: Int32Array;
  private readonly hs = new Float64Array(256);
  private readonly hw = new Float64Array(256);
  private readonly mask = new Int32Array(8);
  private bufs: Float64Array[] = [];
  private freeBufs: number[] = [];
  // Pending-node stack.
  private sStart = new Int32Array(64);
  private sEnd = new Int32Array(64);
  private sDepth = new Int32Array(64);
  private sParent = new Int32Array(64);
  private sBuf = new Int32Array(64);
  private sW = new Float64Array(64);
  private sS = new Float64Array(64);
  // Node arrays of the tree being grown.
  private nFeature: Int32Array;
  private nThreshold: Float64Array;
  private nLeft: Int32Array;
  private nRight: Int32Array;
  private nValue: Float64Array;
  // Best split found by the last search.
  private bestG = 0;
  private bestF = -1;
  private bestLo = 0;
  private bestHi = 0;
  private bestWL = 0;
  private bestSL = 0;

  constructor(data: GrowData, params: GrowParams) {
    this.d = data;
    this.prm = params;
    this.maxDepth = params.maxDepth === null ? UNLIMITED_DEPTH : params.maxDepth;
    this.totalBins = data.offsets[data.features];
    this.denseMin = params.denseMinWeight ?? defaultDenseMinWeight(this.totalBins, params.mtry);
    const n = data.rows;
    this.counts = new Int32Array(n);
    this.idx = new Int32Array(2 * n);
    this.w = new Float64Array(n);
    this.wy = new Float64Array(n);
    this.perm = new Int32Array(data.features);
    for (let f = 0; f < data.features; f++) this.perm[f] = f;
    const cap = Math.max(16, Math.min(2 * Math.ceil(params.sampleSize / Math.max(1, params.minLeaf)) + 1, 1 << 20));
    this.nFeature = new Int32Array(cap);
    this.nThreshold = new Float64Array(cap);
    this.nLeft = new Int32Array(cap);
    this.nRight = new Int32Array(cap);
    this.nValue = new Float64Array(cap);
  }

  /** Grow tree number `treeIndex`; its randomness comes only from (seed, treeIndex). */
  grow(treeIndex: number): GrownTree {
    const d = this.d;
    const n = d.rows;
    const p = d.features;
    const codes = d.codes;
    const offsets = d.offsets;
    const yc = d.yc;
    const counts = this.counts;
    const idx = this.idx;
    const w = this.w;
    const wy = this.wy;
    const minLeaf = this.prm.minLeaf;
    const mtry = this.prm.mtry;
    const sampleFeatures = mtry < p;
    const perm = this.perm;
    const rng = rngFor(this.prm.seed, 'tree', treeIndex);

    // 1. In-bag sample, as draw counts per row.
    const size = this.prm.sampleSize;
    if (this.prm.replace) {
      counts.fill(0);
      for (let k = 0; k < size; k++) counts[rng.int(n)]++;
    } else if (size >= n) {
      counts.fill(1);
    } else {
      for (let i = 0; i < n; i++) idx[n + i] = i;
      for (let k = 0; k < size; k++) {
        const j = k + rng.int(n - k);
        const t = idx[n + k];
        idx[n + k] = idx[n + j];
        idx[n + j] = t;
      }
      counts.fill(0);
      for (let k = 0; k < size; k++) counts[idx[n + k]] = 1;
    }
    let m = 0;
    let rootS = 0;
    let rootW = 0;
    for (let r = 0; r < n; r++) {
      const c = counts[r];
      if (c > 0) {
        idx[m++] = r;
        w[r] = c;
        wy[r] = c * yc[r];
        rootS += wy[r];
        rootW += c;
      }
    }
    // Feature sampling restarts from column order in every tree, so a tree does not depend on the
    // trees this builder grew before it.
    for (let f = 0; f < p; f++) perm[f] = f;

    // 2. Grow depth-first; preorder numbering (left child = parent + 1) falls out of popping left first.
    const importance = new Float64Array(p);
    let rootBuf = -1;
    if (rootW >= this.denseMin) {
      rootBuf = this.acquire();
      const h = this.bufs[rootBuf];
      h.fill(0);
      for (let i = 0; i < m; i++) this.accumulate(h, idx[i]);
    }
    let top = 0;
    this.push(top++, 0, m, 0, -1, rootW, rootS, rootBuf);
    let nodes = 0;
    while (top > 0) {
      top--;
      const start = this.sStart[top];
      const end = this.sEnd[top];
      const depth = this.sDepth[top];
      const parent = this.sParent[top];
      const W = this.sW[top];
      const S = this.sS[top];
      const buf = this.sBuf[top];
      const id = nodes++;
      if (id >= this.nFeature.length) this.growNodes();
      if (parent >= 0) {
        if (parent & 1) this.nRight[parent >> 1] = id;
        else this.nLeft[parent >> 1] = id;
      }

      this.bestF = -1;
      this.bestG = -Infinity;
      if (depth < this.maxDepth && W >= 2 * minLeaf && end - start >= 2) {
        for (let k = 0; k < mtry; k++) {
          let f = k;
          if (sampleFeatures) {
            const j = k + rng.int(p - k);
            f = perm[j];
            perm[j] = perm[k];
            perm[k] = f;
          }
          if (buf >= 0) this.searchDense(this.bufs[buf], f, W, S);
          else this.searchSparse(start, end, f, W, S);
        }
      }
      const parentProxy = (S * S) / W;
      const gain = this.bestG - parentProxy;
      if (this.bestF < 0 || !(gain > REL_TOL * this.bestG)) {
        this.makeLeaf(id, start, end);
        if (buf >= 0) this.release(buf);
        continue;
      }

      // 3. Record the split.
      const f = this.bestF;
      const lo = this.bestLo;
      const off = offsets[f];
      this.nFeature[id] = f;
      this.nThreshold[id] = midpoint(d.binMax[off + lo], d.binMin[off + this.bestHi]);
      this.nValue[id] = NaN;
      importance[f] += gain;
      const WL = this.bestWL;
      const SL = this.bestSL;
      const WR = W - WL;
      const SR = S - SL;

      // 4. Stable partition; the smaller child's histogram is built on the way if the larger one needs one.
      const leftSmall = WL <= WR;
      const needHist = buf >= 0 && (leftSmall ? WR : WL) >= this.denseMin;
      let small = -1;
      let l = start;
      let rr = n;
      if (!needHist) {
        for (let i = start; i < end; i++) {
          const r = idx[i];
          if (codes[r * p + f] <= lo) idx[l++] = r;
          else idx[rr++] = r;
        }
      } else {
        small = this.acquire();
        const h2 = this.bufs[small];
        h2.fill(0);
        if (leftSmall) {
          for (let i = start; i < end; i++) {
            const r = idx[i];
            if (codes[r * p + f] <= lo) {
              idx[l++] = r;
              this.accumulate(h2, r);
            } else idx[rr++] = r;
          }
        } else {
          for (let i = start; i < end; i++) {
            const r = idx[i];
            if (codes[r * p + f] <= lo) idx[l++] = r;
            else {
              idx[rr++] = r;
              this.accumulate(h2, r);
            }
          }
        }
        const h = this.bufs[buf];
        const len = 2 * this.totalBins;
        for (let k = 0; k < len; k++) h[k] -= h2[k];
      }
      idx.copyWithin(l, n, rr);
      let leftBuf = -1;
      let rightBuf = -1;
      if (needHist) {
        const smallKeeps = (leftSmall ? WL : WR) >= this.denseMin;
        if (!smallKeeps) {
          this.release(small);
          small = -1;
        }
        if (leftSmall) {
          leftBuf = small;
          rightBuf = buf;
        } else {
          leftBuf = buf;
          rightBuf = small;
        }
      } else if (buf >= 0) this.release(buf);

      this.push(top++, l, end, depth + 1, id * 2 + 1, WR, SR, rightBuf);
      this.push(top++, start, l, depth + 1, id * 2, WL, SL, leftBuf);
    }

    // 5. Finish: exact-size tree, importance per in-bag weight, out-of-bag predictions.
    const tree: Tree = {
      feature: this.nFeature.slice(0, nodes),
      threshold: this.nThreshold.slice(0, nodes),
      left: this.nLeft.slice(0, nodes),
      right: this.nRight.slice(0, nodes),
      value: this.nValue.slice(0, nodes),
    };
    for (let f = 0; f < p; f++) importance[f] /= rootW;
    let nOob = 0;
    for (let r = 0; r < n; r++) if (counts[r] === 0) nOob++;
    const oobRows = new Int32Array(nOob);
    const oobValues = new Float64Array(nOob);
    let k = 0;
    for (let r = 0; r < n; r++) {
      if (counts[r] === 0) {
        oobRows[k] = r;
        oobValues[k] = predictRow(tree, d.raw, r);
        k++;
      }
    }
    return { tree, importance, oobRows, oobValues };
  }

  /** Adds row r's in-bag weight and weighted target to every feature's histogram h. */
  private accumulate(h: Float64Array, r: number): void {
    const p = this.d.features;
    const codes = this.d.codes;
    const offsets = this.d.offsets;
    const a = this.wy[r];
    const c = this.w[r];
    const base = r * p;
    for (let g = 0; g < p; g++) {
      const k = (offsets[g] + codes[base + g]) << 1;
      h[k] += a;
      h[k + 1] += c;
    }
  }

  private searchDense(h: Float64Array, f: number, W: number, S: number): void {
    const minLeaf = this.prm.minLeaf;
    const base = this.d.offsets[f] << 1;
    const nb = this.d.nBins[f];
    let SL = 0;
    let WL = 0;
    let prev = -1;
    for (let b = 0; b < nb; b++) {
      const wb = h[base + 2 * b + 1];
      if (wb === 0) continue;
      if (prev >= 0 && WL >= minLeaf) {
        const WR = W - WL;
        if (WR < minLeaf) break;
        const SR = S - SL;
        const g = (SL * SL) / WL + (SR * SR) / WR;
        if (g > this.bestG) {
          this.bestG = g;
          this.bestF = f;
          this.bestLo = prev;
          this.bestHi = b;
          this.bestWL = WL;
          this.bestSL = SL;
        }
      }
      SL += h[base + 2 * b];
      WL += wb;
      prev = b;
    }
  }

  private searchSparse(start: number, end: number, f: number, W: number, S: number): void {
    const minLeaf = this.prm.minLeaf;
    const p = this.d.features;
    const codes = this.d.codes;
    const idx = this.idx;
    const w = this.w;
    const wy = this.wy;
    const hs = this.hs;
    const hw = this.hw;
    const mask = this.mask;
    for (let i = start; i < end; i++) {
      const r = idx[i];
      const b = codes[r * p + f];
      const word = b >>> 5;
      const bit = 1 << (b & 31);
      if ((mask[word] & bit) !== 0) {
        hs[b] += wy[r];
        hw[b] += w[r];
      } else {
        mask[word] |= bit;
        hs[b] = wy[r];
        hw[b] = w[r];
      }
    }
    const words = (this.d.nBins[f] + 31) >>> 5;
    let SL = 0;
    let WL = 0;
    let prev = -1;
    scan: for (let word = 0; word < words; word++) {
      let bits = mask[word];
      while (bits !== 0) {
        const low = bits & -bits;
        bits ^= low;
        const b = (word << 5) + 31 - Math.clz32(low);
        if (prev >= 0 && WL >= minLeaf) {
          const WR = W - WL;
          if (WR < minLeaf) break scan;
          const SR = S - SL;
          const g = (SL * SL) / WL + (SR * SR) / WR;
          if (g > this.bestG) {
            this.bestG = g;
            this.bestF = f;
            this.bestLo = prev;
            this.bestHi = b;
            this.bestWL = WL;
            this.bestSL = SL;
          }
        }
        SL += hs[b];
        WL += hw[b];
        prev = b;
      }
    }
    for (let word = 0; word < words; word++) mask[word] = 0;
  }

  private makeLeaf(id: number, start: number, end: number): void {
    const y = this.d.y;
    const idx = this.idx;
    const w = this.w;
    const y0 = y[idx[start]];
    let same = true;
    let s = 0;
    let sw = 0;
    for (let i = start; i < end; i++) {
      const r = idx[i];
      const v = y[r];
      s += w[r] * v;
      sw += w[r];
      if (v !== y0) same = false;
    }
    this.nFeature[id] = -1;
    this.nThreshold[id] = NaN;
    this.nLeft[id] = -1;
    this.nRight[id] = -1;
    // Equal targets give exactly that target, which a rounded mean need not.
    this.nValue[id] = same ? y0 : s / sw;
  }

  private push(at: number, start: number, end: number, depth: number, parent: number, W: number, S: number, buf: number): void {
    if (at >= this.sStart.length) this.growStack();
    this.sStart[at] = start;
    this.sEnd[at] = end;
    this.sDepth[at] = depth;
    this.sParent[at] = parent;
    this.sW[at] = W;
    this.sS[at] = S;
    this.sBuf[at] = buf;
  }

  private acquire(): number {
    const free = this.freeBufs.pop();
    if (free !== undefined) return free;
    this.bufs.push(new Float64Array(2 * this.totalBins));
    return this.bufs.length - 1;
  }

  private release(buf: number): void {
    this.freeBufs.push(buf);
  }

  private growStack(): void {
    const grow32 = (a: Int32Array): Int32Array<ArrayBuffer> => {
      const b = new Int32Array(a.length * 2);
      b.set(a);
      return b;
    };
    const grow64 = (a: Float64Array): Float64Array<ArrayBuffer> => {
      const b = new Float64Array(a.length * 2);
      b.set(a);
      return b;
    };
    this.sStart = grow32(this.sStart);
    this.sEnd = grow32(this.sEnd);
    this.sDepth = grow32(this.sDepth);
    this.sParent = grow32(this.sParent);
    this.sBuf = grow32(this.sBuf);
    this.sW = grow64(this.sW);
    this.sS = grow64(this.sS);
  }

  private growNodes(): void {
    const cap = this.nFeature.length * 2;
    const f = new Int32Array(cap);
    f.set(this.nFeature);
    this.nFeature = f;
    const t = new Float64Array(cap);
    t.set(this.nThreshold);
    this.nThreshold = t;
    const l = new Int32Array(cap);
    l.set(this.nLeft);
    this.nLeft = l;
    const r = new Int32Array(cap);
    r.set(this.nRight);
    this.nRight = r;
    const v = new Float64Array(cap);
    v.set(this.nValue);
    this.nValue = v;
  }
}
