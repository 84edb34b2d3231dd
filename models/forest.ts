/**
 * Random-forest and decision-tree regression: the engine's public API.
 *
 * A decision tree is the same engine with one tree, every row once (no bootstrap) and every feature
 * at every split. A random forest (Breiman 2001) grows each tree on a bootstrap sample and tries
 * `mtry` randomly chosen features at every split; its prediction is the mean of the trees'.
 *
 * Example:
 * ```ts
 * const x = { columns: [x1, x2], names: ['x1', 'x2'], rows: x1.length };
 * const forest = await fitForest(x, y, { trees: 500, maxDepth: null, minLeaf: 5, mtry: 1, seed: 'run-7' });
 * const yhat = predictForest(forest, x);
 * ```
 */
import { binColumns, type BinnedData } from './binning.js';
import { checkInteger, checkMatrix, checkMaxDepth, checkSampleFraction, checkTarget, resolveMtry, type Matrix } from './checks.js';
import {
  DEFAULT_MAX_BINS,
  DEFAULT_REPLACE,
  DEFAULT_SAMPLE_FRACTION,
  DEFAULT_WORKERS,
  TREE_BLOCK,
} from './defaults.js';
import { EngineInputError, engineMessages as msg } from './engine-errors.js';
import { ForestPool, sharedFloat64 } from './forest-pool.js';
import { r2 } from './metrics.js';
import { checkPredictionMatrix, predictUnchecked } from './predict.js';
import type { Tree } from './tree.js';
import { TreeBuilder, type GrowData, type GrowParams, type GrownTree } from './tree-grow.js';

export type { Matrix } from './checks.js';
export type { Tree } from './tree.js';
export { EngineInputError, engineMessages } from './engine-errors.js';
export { checkPredictionMatrix, predictUnchecked } from './predict.js';
export * from './defaults.js';

export interface ForestOptions {
  /** Number of trees, at least 1. */
  trees: number;
  /** Maximum depth (root = depth 0), or null for unlimited. */
  maxDepth: number | null;
  /** Minimum rows in a leaf, counted as bootstrap draws (a row drawn twice counts twice). */
  minLeaf: number;
  /**
   * Smallest node, in draws, that may still be split (an integer >= 2); default 2 × minLeaf, i.e. no
   * limit beyond minLeaf. ranger's node-size rule (min.node.size = k: nodes of k or fewer samples are
   * not split, leaves may be smaller) is minLeaf 1 with minSplit k + 1.
   */
  minSplit?: number;
  /**
   * Integer >= 1: features tried at each split; 0 < mtry < 1: that fraction of the predictors, rounded
   * down, at least 1; null: a third of the predictors, rounded down, at least 1.
   */
  mtry: number | null;
  /** Rows drawn per tree as a fraction of the training rows (0, 1]; default 1. */
  sampleFraction?: number;
  /** Draw with replacement (bootstrap); default true. */
  replace?: boolean;
  /** All randomness derives from this string (tree i uses SHA-256 of `${seed}|tree|${i}`). */
  seed: string;
  /**
   * Threads growing trees, this one included (so 2 = this thread plus one worker thread); default 1,
   * which uses no worker threads. Small fits (see MIN_DRAWS_FOR_THREADS) use one thread regardless.
   * Results do not depend on it.
   */
  workers?: number;
  /** Quantile bins per feature, 2..256; default 256. */
  maxBins?: number;
  /**
   * Follow each tree's out-of-bag rows to their leaves, for Forest.oob (default true). A forest that
   * only predicts other rows (a cross-validation fold's) skips it, about a tenth of the fit; its oob
   * then has no predictions, an r2 of null and a reason saying so. The trees are the same either way.
   */
  outOfBag?: boolean;
  /**
   * Keep the forest's predictions of its own training rows (Forest.fitted), gathered while the trees
   * grow instead of by walking every row down every tree afterwards; the same, bit for bit, as
   * predictForest(forest, x). Default false. Out-of-bag rows are then followed whatever outOfBag says.
   */
  fitted?: boolean;
}

/** The settings a forest was fitted with, resolved (mtry as a count, defaults filled in). */
export interface ForestSettings {
  trees: number;
  maxDepth: number | null;
  minLeaf: number;
  /** Smallest node (in draws) that may be split; at least 2 × minLeaf. */
  minSplit: number;
  /** Features tried at each split, as a count. */
  mtry: number;
  sampleFraction: number;
  replace: boolean;
  /** Draws per tree: round(sampleFraction × training rows), at least 1. */
  sampleSize: number;
  seed: string;
  maxBins: number;
}

export interface OobResult {
  /** Mean prediction of the trees for which the row was out of bag; NaN for rows never out of bag. */
  predictions: Float64Array;
  /** R² of the out-of-bag predictions over the rows that have one; null when undefined (see reason). */
  r2: number | null;
  reason?: string;
  /** Rows never out of bag (excluded from r2). */
  rowsExcluded: number;
}

/** A fitted forest (or single tree): flat typed-array trees plus what was learned at fit time. */
export interface Forest {
  kind: 'random_forest' | 'decision_tree';
  featureNames: string[];
  trainingRows: number;
  options: ForestSettings;
  trees: Tree[];
  oob: OobResult;
  /** See impurityImportance(). */
  impurityImportance: Float64Array;
  /**
   * With ForestOptions.fitted: the forest's predictions of its training rows (in-sample, so not a
   * measure of skill). Not serialized.
   */
  fitted?: Float64Array;
}

/**
 * Below this many draws over all trees (rows per tree × trees) a fit stays in the calling thread
 * whatever `workers` says: a tree costs roughly half a microsecond per draw, so such a fit takes under
 * about half a second, less than starting a worker thread and warming up its compiler costs. Results
 * are identical either way.
 */
export const MIN_DRAWS_FOR_THREADS = 1_000_000;

/**
 * Fits a random forest of regression trees.
 *
 * Example: `await fitForest(x, y, { trees: 300, maxDepth: null, minLeaf: 5, mtry: 1 / 3, seed: 's', workers: 2 })`
 */
export async function fitForest(x: Matrix, y: Float64Array, opts: ForestOptions): Promise<Forest> {
  const settings = resolveSettings(x, y, opts);
  const workers = checkInteger('workers', opts.workers ?? DEFAULT_WORKERS, 1);
  const fitted = opts.fitted ?? false;
  if (typeof fitted !== 'boolean') throw new EngineInputError(msg.fitted(fitted));
  const outOfBag = opts.outOfBag ?? true;
  if (typeof outOfBag !== 'boolean') throw new EngineInputError(msg.outOfBag(outOfBag));
  return fitResolved(x, y, settings, 'random_forest', workers, fitted || outOfBag, fitted);
}

/**
 * Fits one CART regression tree: all rows once, every feature at every split. With at most 256
 * distinct values per feature the split search is exact CART.
 *
 * Example: `await fitDecisionTree(x, y, { maxDepth: 3, minLeaf: 5, seed: 's' })`
 */
export async function fitDecisionTree(
  x: Matrix,
  y: Float64Array,
  opts: { maxDepth: number | null; minLeaf: number; seed: string; minSplit?: number; maxBins?: number },
): Promise<Forest> {
  const settings = resolveSettings(x, y, {
    trees: 1,
    maxDepth: opts.maxDepth,
    minLeaf: opts.minLeaf,
    minSplit: opts.minSplit,
    mtry: Math.max(1, x.columns.length),
    sampleFraction: 1,
    replace: false,
    seed: opts.seed,
    maxBins: opts.maxBins,
  });
  return fitResolved(x, y, settings, 'decision_tree', 1, true, false);
}

/** Checks everything the engine needs; throws EngineInputError with the fix otherwise. */
function resolveSettings(x: Matrix, y: Float64Array, opts: ForestOptions): ForestSettings {
  if (typeof opts.seed !== 'string') throw new EngineInputError(msg.seed(opts.seed));
  const trees = checkInteger('trees', opts.trees, 1);
  const maxDepth = checkMaxDepth(opts.maxDepth);
  const minLeaf = checkInteger('min_leaf', opts.minLeaf, 1);
  const minSplit = Math.max(2 * minLeaf, checkInteger('min_split', opts.minSplit ?? 2, 2));
  const sampleFraction = checkSampleFraction(opts.sampleFraction ?? DEFAULT_SAMPLE_FRACTION);
  const replace = opts.replace ?? DEFAULT_REPLACE;
  if (typeof replace !== 'boolean') throw new EngineInputError(msg.replace(replace));
  const maxBins = checkInteger('max_bins', opts.maxBins ?? DEFAULT_MAX_BINS, 2, 256);
  if (x.columns.length === 0) throw new EngineInputError(msg.noPredictors());
  const mtry = resolveMtry(opts.mtry, x.columns.length);
  if (x.rows === 0) throw new EngineInputError(msg.noRows());
  checkMatrix(x);
  checkTarget(y, x.rows);
  if (x.rows < 2 * minLeaf) throw new EngineInputError(msg.tooFewRows(x.rows, minLeaf));
  const sampleSize = Math.max(1, Math.round(sampleFraction * x.rows));
  return { trees, maxDepth, minLeaf, minSplit, mtry, sampleFraction, replace, sampleSize, seed: opts.seed, maxBins };
}

/**
 * What one block of trees adds to a forest, in the units the engine grew on (the target times
 * targetScale): its trees in order, and the block's out-of-bag and importance sums.
 */
export interface ForestBlock {
  /** The block's number: it holds trees from index × TREE_BLOCK on. */
  index: number;
  trees: Tree[];
  /** Per training row, the sum of the block's out-of-bag predictions of it. */
  oobSum: Float64Array;
  /** Per training row, how many of the block's trees left it out of bag (at most TREE_BLOCK). */
  oobCount: Uint8Array;
  /** Per feature, the sum of the block's trees' impurity decreases. */
  impSum: Float64Array;
}

/**
 * How many blocks of TREE_BLOCK trees a forest of `trees` trees has (the last may hold fewer).
 *
 * Example: `treeBlocks(120)` is 3.
 */
export function treeBlocks(trees: number): number {
  return Math.ceil(trees / TREE_BLOCK);
}

/**
 * Grows blocks `first` to `end - 1` of the forest `opts` describes (each TREE_BLOCK trees, the last
 * block possibly fewer), seeding every tree exactly as fitForest does. Put all the blocks, in
 * order, into assembleForest to get that forest, bit for bit.
 *
 * Example: `await growForestBlocks(x, y, { ...opts, trees: 200 }, 2, 4)` grows trees 100 to 199.
 */
export async function growForestBlocks(x: Matrix, y: Float64Array, opts: ForestOptions, first: number, end: number): Promise<ForestBlock[]> {
  const settings = resolveSettings(x, y, opts);
  const workers = checkInteger('workers', opts.workers ?? DEFAULT_WORKERS, 1);
  const blocks = treeBlocks(settings.trees);
  if (!Number.isInteger(first) || !Number.isInteger(end) || first < 0 || end > blocks || first >= end) {
    throw new EngineInputError(msg.blockRange(first, end, blocks));
  }
  const out: ForestBlock[] = [];
  await growBlocks(x, y, settings, workers, true, null, first, end, (b) => out.push(b));
  return out;
}

/**
 * The forest from all its blocks (as growForestBlocks grew them, on the same x, y and options), in
 * block order: bit-identical to fitForest with the same arguments.
 *
 * Example: `assembleForest(x, y, opts, [...await growForestBlocks(x, y, opts, 0, 2), ...await growForestBlocks(x, y, opts, 2, 4)])`
 */
export function assembleForest(x: Matrix, y: Float64Array, opts: ForestOptions, blocks: ForestBlock[]): Forest {
  const settings = resolveSettings(x, y, opts);
  const totals = new BlockTotals(settings.trees, x.rows, x.columns.length, true);
  for (const b of blocks) totals.add(b);
  return totals.forest(x, y, settings, 'random_forest');
}

async function fitResolved(
  x: Matrix,
  y: Float64Array,
  s: ForestSettings,
  kind: Forest['kind'],
  workers: number,
  outOfBag: boolean,
  fitted: boolean,
): Promise<Forest> {
  const totals = new BlockTotals(s.trees, x.rows, x.columns.length, outOfBag);
  const fittedSum = fitted ? new Float64Array(x.rows) : null;
  await growBlocks(x, y, s, workers, outOfBag, fittedSum, 0, treeBlocks(s.trees), (b) => totals.add(b));
  const forest = totals.forest(x, y, s, kind);
  if (fittedSum) forest.fitted = fittedMean(forest, x, y, fittedSum);
  return forest;
}

/**
 * The forest's predictions of its training rows from the sums of their leaf values, which were added
 * in tree order, as prediction adds them, and are divided by the tree count as it does. A target grown
 * at another scale (targetScale) had its leaf values scaled back after growth; its rows are
 * predicted instead, so that the numbers are prediction's own.
 */
function fittedMean(forest: Forest, x: Matrix, y: Float64Array, sums: Float64Array): Float64Array {
  if (targetScale(y) !== 1) return predictUnchecked(forest, x.columns, x.rows);
  const t = forest.trees.length;
  if (t !== 1) for (let r = 0; r < sums.length; r++) sums[r] /= t;
  return sums;
}

/** Grows the trees of blocks first..end-1 on up to `workers` threads, handing each block over, in order, as it completes. */
async function growBlocks(
  x: Matrix,
  target: Float64Array,
  s: ForestSettings,
  workers: number,
  outOfBag: boolean,
  /** Per training row, the sum of its leaf values over the trees, added in tree order; null: not kept. */
  fittedSum: Float64Array | null,
  first: number,
  end: number,
  onBlock: (block: ForestBlock) => void,
): Promise<void> {
  const from = first * TREE_BLOCK;
  const to = Math.min(end * TREE_BLOCK, s.trees);
  const threaded = workers > 1 && to - from > 1 && s.sampleSize * (to - from) >= MIN_DRAWS_FOR_THREADS;
  // Worker threads start first, so their start-up overlaps the binning below.
  const pool = threaded ? ForestPool.start(Math.min(workers, to - from)) : null;
  try {
    const { data, params } = growInputs(x, target, s, pool !== null, outOfBag, fittedSum !== null);
    const keep = pool ? (values: Float64Array) => pool.keep(values) : (values: Float64Array) => ({ values: values.slice() });
    const combiner = new TreeCombiner(from, to, x.rows, x.columns.length, fittedSum, onBlock, keep);
    if (pool !== null) {
      await pool.grow(data, params, from, to, (i, g) => combiner.add(i, g));
    } else {
      const builder = new TreeBuilder(data, params);
      for (let i = from; i < to; i++) combiner.add(i, builder.grow(i));
    }
  } finally {
    pool?.close();
  }
}

/** The binned data and growth settings the tree builder needs (over shared memory when threaded). */
function growInputs(
  x: Matrix,
  target: Float64Array,
  s: ForestSettings,
  threaded: boolean,
  outOfBag: boolean,
  fitted: boolean,
): { data: GrowData; params: GrowParams } {
  // Split gains are sums of squared target values: above about 1e154 they overflow and every split
  // looks worthless. Growing on the target times a power of two, then scaling leaf values, out-of-bag
  // predictions and importances back (BlockTotals.forest), is exact in floating point, so ordinary
  // targets (scale 1) and huge or tiny ones give the forest the unscaled values would.
  const scale = targetScale(target);
  const y = scale === 1 ? target : target.map((v) => v * scale);
  const n = x.rows;
  const p = x.columns.length;
  const codes = threaded ? new Uint8Array(new SharedArrayBuffer(n * p)) : new Uint8Array(n * p);
  const binned: BinnedData = binColumns(x.columns, s.maxBins, codes);
  let mean = 0;
  for (let r = 0; r < n; r++) mean += y[r];
  mean /= n;
  const yc = threaded ? sharedFloat64(n) : new Float64Array(n);
  for (let r = 0; r < n; r++) yc[r] = y[r] - mean;
  let raw = x.columns;
  if (threaded) {
    const all = sharedFloat64(n * p);
    raw = [];
    for (let f = 0; f < p; f++) {
      const col = all.subarray(f * n, (f + 1) * n);
      col.set(x.columns[f]);
      raw.push(col);
    }
  }
  const data: GrowData = {
    rows: n,
    features: p,
    codes: binned.codes,
    nBins: binned.nBins,
    offsets: binned.offsets,
    binMin: binned.binMin,
    binMax: binned.binMax,
    y: threaded ? sharedFloat64(n, y) : y,
    yc,
    raw,
  };
  const params: GrowParams = {
    maxDepth: s.maxDepth,
    minLeaf: s.minLeaf,
    minSplit: s.minSplit,
    mtry: s.mtry,
    sampleSize: s.sampleSize,
    replace: s.replace,
    seed: s.seed,
    outOfBag,
    fitted,
  };
  return { data, params };
}

/**
 * A power of two that brings the target's largest magnitude near 1 when it is beyond 2^±400, else 1.
 * Multiplying by a power of two changes only the exponent, so nothing is rounded.
 */
export function targetScale(y: Float64Array): number {
  let max = 0;
  for (let i = 0; i < y.length; i++) {
    const a = Math.abs(y[i]);
    if (a > max) max = a;
  }
  if (!(max > 0) || !Number.isFinite(max)) return 1;
  const e = Math.floor(Math.log2(max));
  if (e < 400 && e > -400) return 1;
  // two steps, since 2^-e itself may not be representable for e near ±1023
  return 2 ** Math.trunc(-e / 2) * 2 ** (-e - Math.trunc(-e / 2));
}

/**
 * Folds trees into blocks strictly in tree order, whatever order they arrive in, so the sums of
 * floating-point numbers (OOB predictions, importances) are the same for any number of workers;
 * hands each block on when its last tree is in.
 */
class TreeCombiner {
  private readonly pending: (GrownTree | undefined)[];
  private next: number;
  private block: ForestBlock | null = null;

  constructor(
    private readonly from: number,
    private readonly to: number,
    private readonly rows: number,
    private readonly features: number,
    /** Per row, the sum of its leaf values over the trees so far, in tree order; null: not kept. */
    private readonly fittedSum: Float64Array | null,
    private readonly onBlock: (block: ForestBlock) => void,
    /** Keeps a waiting tree's fitted values, which its builder will overwrite (see ForestPool.keep). */
    private readonly keep: (values: Float64Array) => { values: Float64Array; release?: () => void },
  ) {
    this.pending = new Array<GrownTree | undefined>(to - from);
    this.next = from;
  }

  add(index: number, grown: GrownTree): void {
    // a tree that must wait for earlier ones keeps a copy of values its builder will overwrite
    if (index !== this.next && grown.fitted && grown.fittedScratch) {
      const kept = this.keep(grown.fitted);
      grown.fitted = kept.values;
      grown.release = kept.release;
      grown.fittedScratch = false;
    }
    this.pending[index - this.from] = grown;
    for (let g = this.pending[this.next - this.from]; g !== undefined; g = this.pending[this.next - this.from]) {
      this.pending[this.next - this.from] = undefined;
      const b = (this.block ??= {
        index: Math.floor(this.next / TREE_BLOCK),
        trees: [],
        oobSum: new Float64Array(this.rows),
        oobCount: new Uint8Array(this.rows),
        impSum: new Float64Array(this.features),
      });
      this.next++;
      b.trees.push(g.tree);
      const rows = g.oobRows;
      const values = g.oobValues;
      for (let k = 0; k < rows.length; k++) {
        b.oobSum[rows[k]] += values[k];
        b.oobCount[rows[k]]++;
      }
      for (let f = 0; f < this.features; f++) b.impSum[f] += g.importance[f];
      const sum = this.fittedSum;
      const leafValues = g.fitted;
      if (sum && leafValues) for (let r = 0; r < sum.length; r++) sum[r] += leafValues[r];
      g.release?.();
      if (this.next % TREE_BLOCK === 0 || this.next === this.to) {
        this.block = null;
        this.onBlock(b);
      }
    }
  }
}

/** Forest.oob's reason when a fit did not follow out-of-bag rows (ForestOptions.outOfBag false). */
export const OOB_NOT_FOLLOWED = 'out-of-bag rows were not followed in this fit (a forest fitted only to predict other rows)';

/** Adds whole blocks, strictly in block order, into the forest's sums, then makes the forest. */
class BlockTotals {
  private readonly trees: Tree[] = [];
  private readonly oobSum: Float64Array;
  private readonly oobCount: Int32Array;
  private readonly impSum: Float64Array;

  constructor(
    private readonly count: number,
    rows: number,
    features: number,
    /** Whether the blocks followed out-of-bag rows (else their sums are zero and oob says so). */
    private readonly outOfBag: boolean,
  ) {
    this.oobSum = new Float64Array(rows);
    this.oobCount = new Int32Array(rows);
    this.impSum = new Float64Array(features);
  }

  add(b: ForestBlock): void {
    const expected = Math.floor(this.trees.length / TREE_BLOCK);
    const size = Math.min(TREE_BLOCK, this.count - expected * TREE_BLOCK);
    if (this.trees.length % TREE_BLOCK !== 0 || b.index !== expected) throw new EngineInputError(msg.blockOrder(b.index, expected));
    if (b.trees.length !== size || b.oobSum.length !== this.oobSum.length || b.oobCount.length !== this.oobSum.length || b.impSum.length !== this.impSum.length) {
      throw new EngineInputError(msg.blockShape(b.index, b.trees.length, size, b.oobSum.length, this.oobSum.length));
    }
    for (const t of b.trees) this.trees.push(t);
    for (let r = 0; r < this.oobSum.length; r++) {
      this.oobSum[r] += b.oobSum[r];
      this.oobCount[r] += b.oobCount[r];
    }
    for (let f = 0; f < this.impSum.length; f++) this.impSum[f] += b.impSum[f];
  }

  /** The forest, its leaf values, OOB predictions and importances scaled back to the target's units. */
  forest(x: Matrix, target: Float64Array, s: ForestSettings, kind: Forest['kind']): Forest {
    if (this.trees.length !== this.count) throw new EngineInputError(msg.blocksMissing(this.trees.length, this.count));
    const scale = targetScale(target);
    const y = scale === 1 ? target : target.map((v) => v * scale);
    const forest: Forest = {
      kind,
      featureNames: [...x.names],
      trainingRows: x.rows,
      options: s,
      trees: this.trees,
      oob: this.oobResult(y),
      impurityImportance: this.importance(),
    };
    if (scale !== 1) {
      const back = 1 / scale;
      // new arrays, not in place: a tree read from a step's output is a view of that output's bytes
      forest.trees = forest.trees.map((t) => ({ ...t, thresholdOrValue: t.thresholdOrValue.map((v, i) => (t.feature[i] < 0 ? v * back : v)) }));
      for (let i = 0; i < forest.oob.predictions.length; i++) forest.oob.predictions[i] *= back;
      for (let f = 0; f < forest.impurityImportance.length; f++) forest.impurityImportance[f] *= back * back;
    }
    return forest;
  }

  private oobResult(y: Float64Array): OobResult {
    const n = this.oobSum.length;
    const predictions = new Float64Array(n);
    let used = 0;
    for (let r = 0; r < n; r++) {
      if (this.oobCount[r] > 0) {
        predictions[r] = this.oobSum[r] / this.oobCount[r];
        used++;
      } else predictions[r] = NaN;
    }
    const obs = new Float64Array(used);
    const pred = new Float64Array(used);
    let k = 0;
    for (let r = 0; r < n; r++) {
      if (this.oobCount[r] > 0) {
        obs[k] = y[r];
        pred[k] = predictions[r];
        k++;
      }
    }
    if (!this.outOfBag) return { predictions, r2: null, rowsExcluded: n, reason: OOB_NOT_FOLLOWED };
    const m = r2(obs, pred);
    const out: OobResult = { predictions, r2: m.value, rowsExcluded: n - used };
    if (m.reason !== undefined) out.reason = used === 0 ? 'every row was in the sample of every tree (no bootstrap, or too few trees), so no row was ever out of bag' : m.reason;
    return out;
  }

  private importance(): Float64Array {
    const imp = new Float64Array(this.impSum.length);
    for (let f = 0; f < imp.length; f++) imp[f] = this.impSum[f] / this.count;
    return imp;
  }
}

/**
 * Predictions for the rows of `x` (the mean of the trees). Columns are matched by position and must
 * carry the names the forest was fitted on.
 *
 * Example: `predictForest(forest, { columns: [a, b], names: forest.featureNames, rows: a.length })`
 */
export function predictForest(f: Forest, x: Matrix): Float64Array {
  checkPredictionMatrix(f, x);
  return predictUnchecked(f, x.columns, x.rows);
}

/**
 * Out-of-bag predictions and R², computed at fit time: each training row is predicted by the trees
 * whose sample left it out. Rows in every tree's sample (always so for a decision tree, often for
 * small forests) get NaN and are counted in `rowsExcluded` instead of failing.
 *
 * Example: `const { r2, rowsExcluded } = oob(forest)`
 */
export function oob(f: Forest): OobResult {
  return { ...f.oob, predictions: f.oob.predictions.slice() };
}

/**
 * Impurity importance, computed on the training (in-bag) data: per feature, the decrease in squared
 * error of the splits on it, per unit of in-bag weight, averaged over trees (units of the target
 * squared; the values add up to the mean training-MSE reduction of a tree). Being measured on the
 * data the trees were fitted to, it favours features with many split points and can credit noise;
 * prefer permutation importance on held-out rows (the explain step) for conclusions.
 *
 * Example: `impurityImportance(forest)[2]` is feature 2's share.
 */
export function impurityImportance(f: Forest): Float64Array {
  return f.impurityImportance.slice();
}

export { serializeForest, forestWriter, deserializeForest, serializeBlocks, deserializeBlocks } from './serialize.js';
