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
 * - Small nodes scan their rows instead: a node's mtry features are drawn when its parent splits, and
 *   when the node's turn comes one pass over its rows fills one shared set of per-feature histograms
 *   for just those features (small enough to stay in the L1 cache), marking the bins it touches in a
 *   256-bit occupancy mask. The split search visits the touched bins in order by walking the set bits
 *   and zeroes them as it goes, so a node of ten rows never clears or scans 256 bins, and one read of
 *   a row's codes serves all mtry features.
 *
 * Rows are kept as an index array partitioned stably, so every node's rows are ascending and reads of
 * the row-major bin codes move forward through memory. Out-of-bag rows are kept the same way and
 * partitioned by the same splits (comparing raw values only in a bin that straddles the threshold),
 * so each reaches its leaf as the tree grows, with streaming passes instead of a walk down the
 * finished tree per row.
 *
 * Long loops sit last in small functions (see moveBack): otherwise V8 compiles them, throws the code
 * away (deoptimizes) and compiles them again over and over, which made each thread's first trees
 * several times slower than the rest.
 *
 * Example: `new TreeBuilder(data, params).grow(0)` grows tree 0 of the forest.
 */
import { midpoint } from './binning.js';
import { rngFor, type Sfc32 } from './rng.js';
import type { Tree } from './tree.js';

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
  /** Smallest node weight that may be split (besides 2 × minLeaf); ranger's rule is min.node.size + 1. */
  minSplit?: number;
  /** Follow out-of-bag rows to their leaves (default true); false leaves GrownTree's out-of-bag lists empty. */
  outOfBag?: boolean;
  /** Give every training row its leaf's value (GrownTree.fitted; default false); out-of-bag rows are then followed too. */
  fitted?: boolean;
}

/** One grown tree with what the forest combines across trees. */
export interface GrownTree {
  tree: Tree;
  /** Per feature: decrease in in-bag squared error from its splits, divided by the tree's in-bag weight. */
  importance: Float64Array;
  /** Out-of-bag rows (grouped by leaf) and this tree's prediction for each; empty when not followed. */
  oobRows: Int32Array;
  oobValues: Float64Array;
  /**
   * With GrowParams.fitted: per training row, the value of the leaf it falls in (the tree's
   * prediction of it). From TreeBuilder.grow it is the builder's own scratch (`fittedScratch`), good
   * only until the builder grows its next tree: whoever keeps it longer copies it.
   */
  fitted?: Float64Array;
  fittedScratch?: boolean;
  /** Set where `fitted` is a view of memory to be handed back once the values are used (see forest-pool.ts). */
  release?: () => void;
}

/**
 * Below this node weight the sparse row scan beats keeping full histograms. Measured on Friedman #1
 * (10 features) with `node --cpu-prof`; the cost of a histogram node grows with the total bin count
 * and the cost of a row scan with mtry, so it is scaled by bins per sampled feature.
 */
export function defaultDenseMinWeight(totalBins: number, mtry: number): number {
  return Math.max(64, Math.round((1.5 * totalBins) / Math.max(1, mtry)));
}

/**
 * Moves the `to - l` rows that partition() left in the scratch half `ix[rows..)` to `ix[l..to)`.
 *
 * (A function of its own, like every long loop here: V8 compiles a function that is still inside a
 * long loop on its first call (on-stack replacement) before any code after the loop has run, and
 * here that code then deoptimizes on every later call. So loops that may run long come last in their
 * functions.)
 */
function moveBack(ix: Int32Array, l: number, to: number, rows: number): void {
  for (let i = rows, j = l; j < to; i++, j++) ix[j] = ix[i];
}

/** Relative gain below which a split is treated as rounding noise (e.g. in a node whose targets are all equal). */
const REL_TOL = 1e-13;
const UNLIMITED_DEPTH = 0x7fffffff;

export class TreeBuilder {
  private readonly d: GrowData;
  private readonly prm: GrowParams;
  private readonly maxDepth: number;
  private readonly minSplit: number;
  private readonly denseMin: number;
  private readonly totalBins: number;
  private readonly mtry: number;
  /** 1: out-of-bag rows are followed to their leaves; 0: they are not listed at all. */
  private readonly outOfBag: number;
  /** Per training row, the value of its leaf in the tree being grown; null unless GrowParams.fitted. */
  private readonly rowValue: Float64Array | null;
  private readonly counts: Int32Array;
  /** In-bag rows of the current nodes in [0, rows); [rows, 2 rows) is scratch for stable partitioning. */
  private readonly idx: Int32Array;
  /** Out-of-bag rows of the current nodes, laid out like `idx` and partitioned by the same splits. */
  private readonly oidx: Int32Array;
  /** Leaf value of the out-of-bag row at the same position of `oidx`, once its leaf is reached. */
  private readonly oobVal: Float64Array;
  /** Per row: [2r] weight × centred target, [2r + 1] weight (draw count); interleaved so one cache line serves both. */
  private readonly wwy: Float64Array;
  private readonly perm: Int32Array;
  /** Dense all-feature histograms (interleaved weighted-target sum, weight), pooled. */
  private bufs: Float64Array[] = [];
  private freeBufs: number[] = [];
  // Pending-node stack, one slot per pending node.
  private sStart = new Int32Array(64);
  private sEnd = new Int32Array(64);
  private sOStart = new Int32Array(64);
  private sOEnd = new Int32Array(64);
  private sDepth = new Int32Array(64);
  private sParent = new Int32Array(64);
  private sBuf = new Int32Array(64);
  private sSplit = new Uint8Array(64);
  private sW = new Float64Array(64);
  private sS = new Float64Array(64);
  /** The mtry features drawn for the node in each slot. */
  private sFeat: Int32Array;
  /** Sparse histograms of the current small node's mtry features (k × 512 + 2 × bin), zero whenever idle. */
  private readonly hist: Float64Array;
  /** Occupancy masks of `hist`, 8 words per feature, zero whenever idle. */
  private readonly mask: Int32Array;
  // Node arrays of the tree being grown.
  private nFeature: Int32Array;
  /** Threshold of an internal node, value of a leaf. */
  private nSplit: Float64Array;
  private nRight: Int32Array;
  private nDraws: Int32Array;
  // Best split found by the last search. Fields that hold fractions start as non-integers, so V8 keeps
  // them as unboxed doubles from the start instead of changing their representation (and
  // deoptimizing the code that uses them) mid-tree.
  private bestG = -Infinity;
  private bestF = -1;
  private bestLo = 0;
  private bestHi = 0;
  private bestWL = 0.5;
  private bestSL = 0.5;
  /** Root's in-bag weight and weighted centred-target sum, set by sample(). */
  private rootW = 0.5;
  private rootS = 0.5;
  /** Pending nodes on the stack, and nodes numbered so far, in the tree being grown. */
  private top = 0;
  private nodes = 0;
  /** Out-of-bag rows listed in `oidx` for the tree being grown. */
  private nOob = 0;

  constructor(data: GrowData, params: GrowParams) {
    this.d = data;
    this.prm = params;
    this.maxDepth = params.maxDepth === null ? UNLIMITED_DEPTH : params.maxDepth;
    this.minSplit = Math.max(2 * params.minLeaf, params.minSplit ?? 0);
    this.totalBins = data.offsets[data.features];
    this.mtry = params.mtry;
    this.outOfBag = params.outOfBag === false && params.fitted !== true ? 0 : 1;
    this.rowValue = params.fitted === true ? new Float64Array(data.rows) : null;
    this.denseMin = params.denseMinWeight ?? defaultDenseMinWeight(this.totalBins, params.mtry);
    const n = data.rows;
    this.counts = new Int32Array(n);
    this.idx = new Int32Array(2 * n);
    this.oidx = new Int32Array(2 * n);
    this.oobVal = new Float64Array(n);
    this.wwy = new Float64Array(2 * n);
    this.perm = new Int32Array(data.features);
    this.sFeat = new Int32Array(64 * this.mtry);
    this.hist = new Float64Array(this.mtry * 512);
    this.mask = new Int32Array(this.mtry * 8);
    const cap = Math.max(16, Math.min(2 * Math.ceil(params.sampleSize / Math.max(1, params.minLeaf)) + 1, 1 << 20));
    this.nFeature = new Int32Array(cap);
    this.nSplit = new Float64Array(cap);
    this.nRight = new Int32Array(cap);
    this.nDraws = new Int32Array(cap);
  }

  /** Grow tree number `treeIndex`; its randomness comes only from (seed, treeIndex). */
  grow(treeIndex: number): GrownTree {
    const rng = rngFor(this.prm.seed, 'tree', treeIndex);
    const inBag = this.sample(rng);
    const importance = new Float64Array(this.d.features);
    const nodes = this.growNodes(rng, inBag, importance);
    return this.finish(nodes, importance);
  }

  /**
   * Draws the tree's in-bag sample as draw counts per row, lists the in-bag rows (ascending) in `idx`
   * and the out-of-bag rows in `oidx`, and fills `wwy` and the root's sums. Returns the in-bag count.
   */
  private sample(rng: Sfc32): number {
    this.drawCounts(rng);
    const m = this.listRows();
    this.rootS = this.sumOver(m, 0);
    this.rootW = this.sumOver(m, 1);
    return m;
  }

  /** Sum of wwy[2r + part] over the in-bag rows r = idx[0..m), in ascending row order. */
  private sumOver(m: number, part: number): number {
    const idx = this.idx;
    const wwy = this.wwy;
    let s = 0;
    for (let i = 0; i < m; i++) s += wwy[2 * idx[i] + part];
    return s;
  }

  /** Fills `counts` with the number of times each row is drawn. */
  private drawCounts(rng: Sfc32): void {
    const n = this.d.rows;
    const counts = this.counts;
    const idx = this.idx;
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
  }

  /**
   * From `counts`: in-bag rows into `idx`, out-of-bag rows into `oidx` (when followed; their count
   * into nOob), and `wwy`. Returns the number of in-bag rows. (Nothing follows the loop but the
   * return: code compiled while a loop runs, on-stack replacement, has seen nothing after it yet and
   * would be thrown away on reaching it.)
   */
  private listRows(): number {
    const n = this.d.rows;
    const yc = this.d.yc;
    const counts = this.counts;
    const idx = this.idx;
    const oidx = this.oidx;
    const wwy = this.wwy;
    const listOob = this.outOfBag;
    let m = 0;
    let o = 0;
    for (let r = 0; r < n; r++) {
      const c = counts[r];
      if (c > 0) {
        idx[m++] = r;
        wwy[2 * r] = c * yc[r];
        wwy[2 * r + 1] = c;
      } else if (listOob === 1) oidx[o++] = r;
    }
    this.nOob = o;
    return m;
  }

  /**
   * Depth-first growth from the root over `idx[0..m)`; popping the left child first numbers nodes in
   * preorder (left = parent + 1). Returns the number of nodes.
   */
  private growNodes(rng: Sfc32, m: number, importance: Float64Array): number {
    const d = this.d;
    const denseMin = this.denseMin;
    const rootW = this.rootW;
    // Feature sampling restarts from column order in every tree, so a tree does not depend on the
    // trees this builder grew before it.
    for (let f = 0; f < d.features; f++) this.perm[f] = f;

    // The root, with its features drawn and (if large) its dense histograms filled.
    this.ensureSlots(2);
    const rootSplits = this.splittable(0, rootW);
    let rootBuf = -1;
    if (rootSplits) {
      this.drawFeatures(0, rng);
      if (rootW >= denseMin) {
        rootBuf = this.acquire();
        this.bufs[rootBuf].fill(0);
        this.accumulateDense(this.bufs[rootBuf], 0, m);
      }
    }
    this.setSlot(0, 0, m, 0, this.nOob, 0, -1, rootW, this.rootS, rootBuf, rootSplits);

    this.top = 1;
    this.nodes = 0;
    // One node per call: visit() is then compiled once, as a function, rather than first as on-stack
    // replacement of a long loop and again later.
    while (this.top > 0) this.visit(rng, importance);
    return this.nodes;
  }

  /** Pops the top pending node: makes it a leaf, or splits it and pushes its children. */
  private visit(rng: Sfc32, importance: Float64Array): void {
    const mtry = this.mtry;
    const slot = --this.top;
    const start = this.sStart[slot];
    const end = this.sEnd[slot];
    const W = this.sW[slot];
    const S = this.sS[slot];
    const buf = this.sBuf[slot];
    const id = this.nodes++;
    if (id >= this.nFeature.length) this.growNodes2x();
    this.nDraws[id] = W;
    // a left child is the node after its parent (preorder); a right child is recorded
    const parent = this.sParent[slot];
    if (parent >= 0 && parent & 1) this.nRight[parent >> 1] = id;

    this.bestF = -1;
    this.bestG = -Infinity;
    if (this.sSplit[slot] === 1) {
      if (buf >= 0) {
        const h = this.bufs[buf];
        for (let k = 0; k < mtry; k++) this.searchDense(h, this.sFeat[slot * mtry + k], W, S);
      } else {
        this.accumulateSparse(slot, start, end);
        this.searchSparse(slot, W, S);
      }
    }
    const gain = this.bestG - (S * S) / W;
    if (this.bestF < 0 || !(gain > REL_TOL * this.bestG)) {
      this.makeLeaf(id, start, end, this.sOStart[slot], this.sOEnd[slot]);
      if (buf >= 0) this.release(buf);
      return;
    }
    importance[this.bestF] += gain;
    this.split(slot, id, rng);
    this.top += 2;
  }

  /**
   * Records the best split found for the node in `slot` as node `id`, partitions its in-bag and
   * out-of-bag rows, and pushes its children: the right one into `slot`, the left one above it.
   */
  private split(slot: number, id: number, rng: Sfc32): void {
    const d = this.d;
    const f = this.bestF;
    const lo = this.bestLo;
    const hi = this.bestHi;
    const off = d.offsets[f];
    const binMax = d.binMax;
    const thr = midpoint(binMax[off + lo], d.binMin[off + hi]);
    this.nFeature[id] = f;
    this.nSplit[id] = thr;
    const start = this.sStart[slot];
    const end = this.sEnd[slot];
    const W = this.sW[slot];
    const S = this.sS[slot];
    const buf = this.sBuf[slot];
    const depth = this.sDepth[slot];
    const WL = this.bestWL;
    const SL = this.bestSL;
    const WR = W - WL;
    const SR = S - SL;
    const l = this.partition(this.idx, start, end, f, lo);
    moveBack(this.idx, l, end, d.rows);

    // Out-of-bag rows follow the same rule as prediction (raw value <= threshold goes left). Every bin
    // up to the last one wholly at or below the threshold (a - 1) goes left, and every bin above it
    // goes right except bin a when it straddles the threshold, whose rows compare raw values.
    let a = lo + 1;
    let b = hi;
    while (a < b) {
      const mid = (a + b) >>> 1;
      if (binMax[off + mid] <= thr) a = mid + 1;
      else b = mid;
    }
    const os = this.sOStart[slot];
    const oe = this.sOEnd[slot];
    let ol = os;
    if (os < oe) {
      if (a < hi && d.binMin[off + a] <= thr) ol = this.partitionStraddle(this.oidx, os, oe, f, a - 1, thr);
      else ol = this.partition(this.oidx, os, oe, f, a - 1);
      moveBack(this.oidx, ol, oe, d.rows);
    }

    // Children: right goes to this slot, left to the next (popped first).
    const top = slot;
    this.ensureSlots(top + 2);
    const rightSlot = top;
    const leftSlot = top + 1;
    const splitsL = this.splittable(depth + 1, WL);
    const splitsR = this.splittable(depth + 1, WR);
    const denseMin = this.denseMin;
    let leftBuf = -1;
    let rightBuf = -1;
    if (buf >= 0) {
      const bufs = this.childBuffers(buf, start, l, end, WL >= denseMin && splitsL, WR >= denseMin && splitsR, WL <= WR);
      leftBuf = (bufs & 0xffff) - 1;
      rightBuf = (bufs >>> 16) - 1;
    }
    if (splitsL) this.drawFeatures(leftSlot, rng);
    if (splitsR) this.drawFeatures(rightSlot, rng);
    this.setSlot(rightSlot, l, end, ol, oe, depth + 1, id * 2 + 1, WR, SR, rightBuf, splitsR);
    this.setSlot(leftSlot, start, l, os, ol, depth + 1, id * 2, WL, SL, leftBuf, splitsL);
  }

  /**
   * Dense histograms for the children of a node with dense histogram `buf` (rows idx[start..l) went
   * left, idx[l..end) right): the larger child, if it is to be dense, keeps `buf` turned into its own
   * histogram (parent minus smaller child, in place); the smaller one gets the histogram built for
   * that, if it is to be dense too. Returns (left buffer + 1) | (right buffer + 1) << 16, 0 for none.
   */
  private childBuffers(buf: number, start: number, l: number, end: number, denseL: boolean, denseR: boolean, leftSmall: boolean): number {
    if (!(leftSmall ? denseR : denseL)) {
      this.release(buf);
      return 0;
    }
    const small = this.acquire();
    const h2 = this.bufs[small];
    h2.fill(0);
    if (leftSmall) this.accumulateDense(h2, start, l);
    else this.accumulateDense(h2, l, end);
    const h = this.bufs[buf];
    const len = 2 * this.totalBins;
    for (let k = 0; k < len; k++) h[k] -= h2[k];
    const smallDense = leftSmall ? denseL : denseR;
    if (!smallDense) this.release(small);
    const smallBuf = smallDense ? small + 1 : 0;
    return leftSmall ? smallBuf | ((buf + 1) << 16) : buf + 1 + (smallBuf << 16);
  }

  /**
   * Stable partition of rows `ix[from..to)` on feature f: codes up to `lo` go left, the rest right.
   * The left rows end up in `ix[from..l)` and the right ones in the scratch `ix[rows..rows + to - l)`,
   * where the caller's `moveBack` takes them to `ix[l..to)`. Returns l.
   */
  private partition(ix: Int32Array, from: number, to: number, f: number, lo: number): number {
    const n = this.d.rows;
    const p = this.d.features;
    const codes = this.d.codes;
    let l = from;
    let rr = n;
    // Branch-free: every row is written to both sides, and the side it belongs to advances.
    for (let i = from; i < to; i++) {
      const r = ix[i];
      // 1 when the row goes right (its code exceeds lo): the sign bit of lo - code.
      const right = (lo - codes[r * p + f]) >>> 31;
      ix[l] = r;
      ix[rr] = r;
      l += 1 - right;
      rr += right;
    }
    return l;
  }

  /**
   * As partition(), for out-of-bag rows when one bin (`lo + 1`) straddles the threshold: its rows go
   * left when their raw value is at most `thr`. (A separate method, so that the optimizing compiler
   * sees this loop run before it compiles it.)
   */
  private partitionStraddle(ix: Int32Array, from: number, to: number, f: number, lo: number, thr: number): number {
    const n = this.d.rows;
    const p = this.d.features;
    const codes = this.d.codes;
    const col = this.d.raw[f];
    const mid = lo + 1;
    let l = from;
    let rr = n;
    for (let i = from; i < to; i++) {
      const r = ix[i];
      const c = codes[r * p + f];
      const right = c === mid ? (col[r] <= thr ? 0 : 1) : (lo - c) >>> 31;
      ix[l] = r;
      ix[rr] = r;
      l += 1 - right;
      rr += right;
    }
    return l;
  }

  /** Exact-size tree, importance per in-bag weight, and the out-of-bag rows with their leaf values. */
  private finish(nodes: number, importance: Float64Array): GrownTree {
    const tree: Tree = {
      feature: this.nFeature.slice(0, nodes),
      thresholdOrValue: this.nSplit.slice(0, nodes),
      right: this.nRight.slice(0, nodes),
      draws: this.nDraws.slice(0, nodes),
    };
    const rootW = this.rootW;
    for (let f = 0; f < importance.length; f++) importance[f] /= rootW;
    const nOob = this.nOob;
    const grown: GrownTree = { tree, importance, oobRows: this.oidx.slice(0, nOob), oobValues: this.oobVal.slice(0, nOob) };
    if (this.rowValue) {
      // not copied: a row's values per tree would be megabytes of garbage a tree at a million rows
      grown.fitted = this.rowValue;
      grown.fittedScratch = true;
    }
    return grown;
  }

  private splittable(depth: number, W: number): boolean {
    return depth < this.maxDepth && W >= this.minSplit;
  }

  /** Draws the node's mtry features (a partial Fisher–Yates shuffle), or takes all in column order. */
  private drawFeatures(slot: number, rng: Sfc32): void {
    const mtry = this.mtry;
    const p = this.d.features;
    const out = this.sFeat;
    const base = slot * mtry;
    if (mtry >= p) {
      for (let k = 0; k < mtry; k++) out[base + k] = k;
      return;
    }
    const perm = this.perm;
    for (let k = 0; k < mtry; k++) {
      const j = k + rng.int(p - k);
      const f = perm[j];
      perm[j] = perm[k];
      perm[k] = f;
      out[base + k] = f;
    }
  }

  /** Adds rows idx[from..to) to every feature's dense histogram h. */
  private accumulateDense(h: Float64Array, from: number, to: number): void {
    const p = this.d.features;
    const codes = this.d.codes;
    const offsets = this.d.offsets;
    const idx = this.idx;
    const wwy = this.wwy;
    for (let i = from; i < to; i++) {
      const r = idx[i];
      const a = wwy[2 * r];
      const c = wwy[2 * r + 1];
      const base = r * p;
      for (let g = 0; g < p; g++) {
        const k = (offsets[g] + codes[base + g]) << 1;
        h[k] += a;
        h[k + 1] += c;
      }
    }
  }

  /** Adds rows idx[from..to) to the sparse histograms of the slot's drawn features, marking touched bins. */
  private accumulateSparse(slot: number, from: number, to: number): void {
    const p = this.d.features;
    const codes = this.d.codes;
    const idx = this.idx;
    const wwy = this.wwy;
    const mtry = this.mtry;
    const feats = this.sFeat;
    const fo = slot * mtry;
    const H = this.hist;
    const M = this.mask;
    for (let i = from; i < to; i++) {
      const r = idx[i];
      const a = wwy[2 * r];
      const c = wwy[2 * r + 1];
      const base = r * p;
      for (let k = 0; k < mtry; k++) {
        const b = codes[base + feats[fo + k]];
        M[(k << 3) + (b >>> 5)] |= 1 << (b & 31);
        const j = (k << 9) + (b << 1);
        H[j] += a;
        H[j + 1] += c;
      }
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

  /** Split search over the sparse histograms of the slot's features; leaves them zeroed for the next node. */
  private searchSparse(slot: number, W: number, S: number): void {
    const minLeaf = this.prm.minLeaf;
    const mtry = this.mtry;
    const nBins = this.d.nBins;
    const H = this.hist;
    const M = this.mask;
    const fo = slot * mtry;
    for (let k = 0; k < mtry; k++) {
      const f = this.sFeat[fo + k];
      const hb = k << 9;
      const mb = k << 3;
      const words = (nBins[f] + 31) >>> 5;
      let SL = 0;
      let WL = 0;
      let prev = -1;
      let live = true;
      for (let word = 0; word < words; word++) {
        let bits = M[mb + word];
        if (bits === 0) continue;
        M[mb + word] = 0;
        while (bits !== 0) {
          const low = bits & -bits;
          bits ^= low;
          const j = hb + (((word << 5) + 31 - Math.clz32(low)) << 1);
          const hs = H[j];
          const hw = H[j + 1];
          H[j] = 0;
          H[j + 1] = 0;
          if (!live) continue;
          if (prev >= 0 && WL >= minLeaf) {
            const WR = W - WL;
            if (WR < minLeaf) {
              live = false;
              continue;
            }
            const SR = S - SL;
            const g = (SL * SL) / WL + (SR * SR) / WR;
            if (g > this.bestG) {
              this.bestG = g;
              this.bestF = f;
              this.bestLo = prev;
              this.bestHi = (j - hb) >> 1;
              this.bestWL = WL;
              this.bestSL = SL;
            }
          }
          SL += hs;
          WL += hw;
          prev = (j - hb) >> 1;
        }
      }
    }
  }

  /** Makes node `id` a leaf of in-bag rows idx[start..end) and gives its value to out-of-bag rows oidx[os..oe). */
  private makeLeaf(id: number, start: number, end: number, os: number, oe: number): void {
    const y = this.d.y;
    const idx = this.idx;
    const wwy = this.wwy;
    const y0 = y[idx[start]];
    let same = true;
    let s = 0;
    let sw = 0;
    for (let i = start; i < end; i++) {
      const r = idx[i];
      const v = y[r];
      const c = wwy[2 * r + 1];
      s += c * v;
      sw += c;
      if (v !== y0) same = false;
    }
    this.nFeature[id] = -1;
    this.nRight[id] = -1;
    // Equal targets give exactly that target, which a rounded mean need not.
    const value = same ? y0 : s / sw;
    this.nSplit[id] = value;
    this.oobVal.fill(value, os, oe);
    if (this.rowValue) this.giveLeafValue(this.rowValue, value, start, end, os, oe);
  }

  /**
   * Gives the leaf's value to its in-bag rows idx[start..end) and out-of-bag rows oidx[os..oe). The
   * rows were routed by their bins, and every bin lies wholly on one side of the thresholds they met
   * (straddling bins of out-of-bag rows compared raw values), so each is the leaf prediction finds.
   */
  private giveLeafValue(rowValue: Float64Array, value: number, start: number, end: number, os: number, oe: number): void {
    const idx = this.idx;
    const oidx = this.oidx;
    for (let i = start; i < end; i++) rowValue[idx[i]] = value;
    for (let i = os; i < oe; i++) rowValue[oidx[i]] = value;
  }

  private setSlot(
    at: number,
    start: number,
    end: number,
    oStart: number,
    oEnd: number,
    depth: number,
    parent: number,
    W: number,
    S: number,
    buf: number,
    splits: boolean,
  ): void {
    this.sStart[at] = start;
    this.sEnd[at] = end;
    this.sOStart[at] = oStart;
    this.sOEnd[at] = oEnd;
    this.sDepth[at] = depth;
    this.sParent[at] = parent;
    this.sW[at] = W;
    this.sS[at] = S;
    this.sBuf[at] = buf;
    this.sSplit[at] = splits ? 1 : 0;
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

  /** Makes slots 0..count-1 usable. */
  private ensureSlots(count: number): void {
    if (count > this.sStart.length) this.growSlots(count);
  }

  /** Enlarges the stack arrays to at least `count` slots (kept apart from ensureSlots, which is inlined where it is called). */
  private growSlots(count: number): void {
    const size = Math.max(count, this.sStart.length * 2);
    const grow32 = (a: Int32Array, len: number): Int32Array<ArrayBuffer> => {
      const b = new Int32Array(len);
      b.set(a);
      return b;
    };
    const grow64 = (a: Float64Array): Float64Array<ArrayBuffer> => {
      const b = new Float64Array(size);
      b.set(a);
      return b;
    };
    this.sStart = grow32(this.sStart, size);
    this.sEnd = grow32(this.sEnd, size);
    this.sOStart = grow32(this.sOStart, size);
    this.sOEnd = grow32(this.sOEnd, size);
    this.sDepth = grow32(this.sDepth, size);
    this.sParent = grow32(this.sParent, size);
    this.sBuf = grow32(this.sBuf, size);
    this.sFeat = grow32(this.sFeat, size * this.mtry);
    const split = new Uint8Array(size);
    split.set(this.sSplit);
    this.sSplit = split;
    this.sW = grow64(this.sW);
    this.sS = grow64(this.sS);
  }

  /** Doubles the capacity of the node arrays. */
  private growNodes2x(): void {
    const cap = this.nFeature.length * 2;
    const f = new Int32Array(cap);
    f.set(this.nFeature);
    this.nFeature = f;
    const t = new Float64Array(cap);
    t.set(this.nSplit);
    this.nSplit = t;
    const r = new Int32Array(cap);
    r.set(this.nRight);
    this.nRight = r;
    const w = new Int32Array(cap);
    w.set(this.nDraws);
    this.nDraws = w;
  }
}
