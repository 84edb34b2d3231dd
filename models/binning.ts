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
  for (let f = 0; f < p; f++) {
    const col = columns[f];
    sorted.set(col);
    sorted.sort();
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
    const lo = new Float64Array(Math.min(d, maxBins));
    const hi = new Float64Array(Math.min(d, maxBins));
    let nb = 0;
    if (d <= maxBins) {
      for (let k = 0; k < d; k++) lo[k] = hi[k] = distinct[k];
      nb = d;
    } else {
      let binsLeft = maxBins;
      let rowsLeft = n;
      let acc = 0;
      let start = -1;
      for (let k = 0; k < d; k++) {
        if (start < 0) start = k;
        acc += counts[k];
        const distinctAfter = d - k - 1;
        const close =
          k === d - 1 || (binsLeft > 1 && (acc >= rowsLeft / binsLeft || distinctAfter <= binsLeft - 1));
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
    }
    nBins[f] = nb;
    offsets[f + 1] = offsets[f] + nb;
    mins.push(lo.subarray(0, nb));
    maxs.push(hi.subarray(0, nb));
    // Bin of v = first bin whose largest value is >= v (binary search over the upper edges).
    for (let r = 0; r < n; r++) {
      const v = col[r];
      let a = 0;
      let b = nb - 1;
      while (a < b) {
        const mid = (a + b) >>> 1;
        if (hi[mid] < v) a = mid + 1;
        else b = mid;
      }
      out[r * p + f] = a;
    }
  }
  const binMin = new Float64Array(offsets[p]);
  const binMax = new Float64Array(offsets[p]);
  for (let f = 0; f < p; f++) {
    binMin.set(mins[f], offsets[f]);
    binMax.set(maxs[f], offsets[f]);
  }
  return { rows: n, features: p, codes: out, nBins, offsets, binMin, binMax };
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
