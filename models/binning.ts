/**
 * Quantile binning of predictor columns, done once per fit so that trees can be grown from
 * per-node histograms of at most 256 bins instead of sorting raw values at every node.
 *
 * Example: `const b = binColumns([new Float64Array([3, 1, 2])], 256); b.codes` is `[2, 0, 1]`
 * (one byte per row and feature, row-major) and `b.binMax` is `[1, 2, 3]`.
 */

/** Binned predictors plus, per bin, the smallest and largest raw training value in it. */
export interface BinnedData {
  rows: number;
  features: number;
  /** Row-major bin codes: `codes[row * features + feature]`. Row-major so one row's codes share a cache line. */
  codes: Uint8Array;
  /** Number of bins of each feature (1..maxBins). */
  nBins: Int32Array;
  /** Feature f's bins occupy `offsets[f] .. offsets[f + 1] - 1` in binMin/binMax and in histograms. */
  offsets: Int32Array;
  binMin: Float64Array;
  binMax: Float64Array;
}

/**
 * Bin each column into at most `maxBins` quantile bins (columns must hold finite numbers).
 *
 * With at most `maxBins` distinct values every distinct value gets its own bin, so split search on
 * bins is exact. Otherwise consecutive distinct values are grouped greedily so that each bin holds
 * about (rows left) / (bins left) rows; a value is never split across bins, so a heavily repeated
 * value simply gets a bin of its own.
 *
 * `codes` may be passed in (e.g. backed by a SharedArrayBuffer for worker threads).
 */
export function binColumns(columns: Float64Array[], maxBins: number, codes?: Uint8Array): BinnedData {
  const p = columns.length;
  const n = p > 0 ? columns[0].length : 0;
  const out = codes ?? new Uint8Array(n * p);
  const nBins = new Int32Array(p);
  const offsets = new Int32Array(p + 1);
  const mins: Float64Array[] = [];
  const maxs: Float64Array[] = [];
  const sorted = new Float64Array(n);
  const distinct = new Float64Array(n);
  const counts = new Int32Array(n);
  const first = new Int32Array(LOOKUP_BUCKETS + 2);
  for (let f = 0; f < p; f++) {
    const col = columns[f];
    sorted.set(col);
    sorted.sort();
    const d = distinctValues(sorted, distinct, counts);
    const lo = new Float64Array(Math.min(d, maxBins));
    const hi = new Float64Array(Math.min(d, maxBins));
    const nb = d <= maxBins ? oneBinEach(distinct, d, lo, hi) : quantileBins(distinct, counts, d, n, maxBins, lo, hi);
    nBins[f] = nb;
    offsets[f + 1] = offsets[f] + nb;
    mins.push(lo.subarray(0, nb));
    maxs.push(hi.subarray(0, nb));
    assignCodes(col, hi, nb, out, p, f, first);
  }
  const binMin = new Float64Array(offsets[p]);
  const binMax = new Float64Array(offsets[p]);
  for (let f = 0; f < p; f++) {
    binMin.set(mins[f], offsets[f]);
    binMax.set(maxs[f], offsets[f]);
  }
  return { rows: n, features: p, codes: out, nBins, offsets, binMin, binMax };
}

/** Writes the distinct values of ascending `sorted` and how often each occurs; returns how many. */
function distinctValues(sorted: Float64Array, distinct: Float64Array, counts: Int32Array): number {
  const n = sorted.length;
  let d = 0;
  for (let i = 0; i < n; i++) {
    const v = sorted[i];
    if (d > 0 && distinct[d - 1] === v) counts[d - 1]++;
    else {
      distinct[d] = v;
      counts[d] = 1;
      d++;
    }
  }
  return d;
}

/** One bin per distinct value; returns the number of bins. */
function oneBinEach(distinct: Float64Array, d: number, lo: Float64Array, hi: Float64Array): number {
  for (let k = 0; k < d; k++) lo[k] = hi[k] = distinct[k];
  return d;
}

/**
 * Groups consecutive distinct values greedily so that each bin holds about (rows left) / (bins left)
 * rows; returns the number of bins.
 */
function quantileBins(
  distinct: Float64Array,
  counts: Int32Array,
  d: number,
  n: number,
  maxBins: number,
  lo: Float64Array,
  hi: Float64Array,
): number {
  let nb = 0;
  let binsLeft = maxBins;
  let rowsLeft = n;
  let acc = 0;
  let start = -1;
  for (let k = 0; k < d; k++) {
    if (start < 0) start = k;
    acc += counts[k];
    const distinctAfter = d - k - 1;
    const close = k === d - 1 || (binsLeft > 1 && (acc >= rowsLeft / binsLeft || distinctAfter <= binsLeft - 1));
    if (close) {
      lo[nb] = distinct[start];
      hi[nb] = distinct[k];
      nb++;
      binsLeft--;
      rowsLeft -= acc;
      acc = 0;
      start = -1;
    }
  }
  return nb;
}

/** Buckets of the value range used to narrow the search for a value's bin. */
const LOOKUP_BUCKETS = 2048;

/**
 * Code of each value: the first bin whose largest value is >= it. The range of upper edges is cut
 * into LOOKUP_BUCKETS equal buckets (plus bucket LOOKUP_BUCKETS for the top edge) and `first[k]` is
 * the first bin whose upper edge falls in bucket k or later (the last bin if none does; `first` has
 * LOOKUP_BUCKETS + 2 entries, the last being the last bin). Bucketing is monotone, so a value in
 * bucket k has its bin in first[k] .. first[k + 1], and a binary search over that range (usually of
 * one or two bins) finds it.
 */
function assignCodes(col: Float64Array, hi: Float64Array, nb: number, out: Uint8Array, p: number, f: number, first: Int32Array): void {
  const n = col.length;
  const min = nb > 0 ? hi[0] : 0;
  const range = nb > 0 ? hi[nb - 1] - min : 0;
  const scale = LOOKUP_BUCKETS / range;
  const K = LOOKUP_BUCKETS;
  if (nb > 1 && Number.isFinite(scale) && scale > 0) {
    for (let k = 0, b = 0; k <= K; k++) {
      while (b < nb - 1 && bucketOf(hi[b], min, scale) < k) b++;
      first[k] = b;
    }
    first[K + 1] = nb - 1;
  } else {
    // Degenerate range: every bucket spans all bins (plain binary search).
    first[0] = 0;
    first[1] = nb - 1;
  }
  const useBuckets = nb > 1 && Number.isFinite(scale) && scale > 0;
  for (let r = 0; r < n; r++) {
    const v = col[r];
    const k = useBuckets ? bucketOf(v, min, scale) : 0;
    let a = first[k];
    let b = first[k + 1];
    while (a < b) {
      const mid = (a + b) >>> 1;
      if (hi[mid] < v) a = mid + 1;
      else b = mid;
    }
    out[r * p + f] = a;
  }
}

/** Bucket of value v (clamped to 0..LOOKUP_BUCKETS); monotone in v. */
function bucketOf(v: number, min: number, scale: number): number {
  const k = Math.floor((v - min) * scale);
  return k < 0 ? 0 : k > LOOKUP_BUCKETS ? LOOKUP_BUCKETS : k;
}

/**
 * The split threshold between two raw values a < c: their midpoint, as CART does, nudged so that
 * `a <= t < c` holds even when a and c are adjacent doubles or their sum overflows.
 *
 * Example: `midpoint(1, 2) === 1.5`
 */
export function midpoint(a: number, c: number): number {
  let t = (a + c) / 2;
  if (!Number.isFinite(t)) t = a / 2 + c / 2;
  if (t >= c || t < a) t = a;
  return t;
}
