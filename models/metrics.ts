/**
 * Regression metrics on paired observed/predicted arrays.
 *
 * Example: `metrics(new Float64Array([1, 2, 3]), new Float64Array([1, 2, 3])).r2 === 1`
 */

/** A metric value, or `null` with the reason it is undefined. */
export interface MetricValue {
  value: number | null;
  reason?: string;
}

export interface MetricSet {
  r2: MetricValue;
  rmse: MetricValue;
  mae: MetricValue;
  bias: MetricValue;
  n: number;
}

export const METRIC_NAMES = ['r2', 'rmse', 'mae', 'bias'] as const;
export type MetricName = (typeof METRIC_NAMES)[number];

/**
 * Why a metric is undefined, one function per reason, so callers and tests compare against the
 * function rather than a copied string.
 */
export const metricReasons = {
  noRows: (): string => 'no rows',
  constant: (): string => 'the observed values are constant, so R² has no denominator',
  negligibleSpread: (ratio: number): string =>
    `the observed values are constant for all practical purposes (their spread is ${ratio.toPrecision(2)} of their size, ` +
    `below ${NEGLIGIBLE_SPREAD.toPrecision(2)}, where float64 rounding decides the digits), so R² has no denominator`,
  nonFiniteObserved: (value: number, row: number): string =>
    `observed value ${String(value)} at row ${row} (counted from 0) is not a finite number`,
  partUndefined: (which: 'baseline' | 'model', reason: string): string => `the ${which}'s RMSE is undefined (${reason})`,
  negligibleBaselineError: (): string =>
    `the baseline's error is rounding noise against the size of the observed values (at most ${NEGLIGIBLE_SPREAD.toPrecision(2)} of it), so the ratio has no denominator`,
  skillOverflow: (ratio: number): string =>
    `the model's RMSE is ${ratio.toPrecision(2)} times the baseline's, so the skill score is beyond the range of float64 numbers`,
  nonFinitePredicted: (value: number, row: number): string =>
    `the model predicted ${String(value)} at row ${row} (counted from 0), which is not a finite number`,
};

/**
 * Relative spread (root mean squared deviation ÷ largest |observed|) at or below which the observed
 * values count as constant and R² is undefined. Each float64 value is rounded to within ε/2 of its
 * size (ε = 2⁻⁵² ≈ 2.2e-16), so every deviation from the mean carries an absolute error of order
 * ε·|y|. R² is shown to 3 decimals, which needs SS_tot right to better than 1 part in 10³ and so
 * the deviations right to about 4 digits: a spread of at least 10⁴·ε·|y| ≈ 2.2e-12·|y|. Below
 * that the "spread" is the rounding of the data and of the arithmetic, and 1 − SS_res/SS_tot
 * measures noise (a constant 5.1 sums to an SS_tot of 1.6e-29, not 0).
 */
export const NEGLIGIBLE_SPREAD = 1e4 * Number.EPSILON;

/**
 * Neumaier's compensated sum (Neumaier 1974; Higham, Accuracy and Stability of Numerical
 * Algorithms, 2nd ed., §4.3): the rounding error of each addition is carried separately, so the
 * result is as accurate as summing in twice the precision, whatever the order or magnitudes.
 */
class CompensatedSum {
  private s = 0;
  private c = 0;
  add(x: number): void {
    const t = this.s + x;
    this.c += Math.abs(this.s) >= Math.abs(x) ? this.s - t + x : x - t + this.s;
    this.s = t;
  }
  get value(): number {
    return this.s + this.c;
  }
}

/** A power of two at or just below max (1 for 0): dividing by it is exact and leaves values up to max below about 2. */
export function powerOfTwoBelow(max: number): number {
  // floor, not ceil: 2^ceil(log2(1.7e308)) would overflow
  return max === 0 ? 1 : 2 ** Math.floor(Math.log2(max));
}

/** powerOfTwoBelow of the largest |v|. */
function powerOfTwoScale(values: ArrayLike<number>): number {
  let max = 0;
  for (let i = 0; i < values.length; i++) max = Math.max(max, Math.abs(values[i]));
  return powerOfTwoBelow(max);
}

/** Σ v², as scale² · sum, so neither overflows nor underflows whatever the size of v. */
function sumOfSquares(v: Float64Array): { scale: number; sum: number } {
  const scale = powerOfTwoScale(v);
  const s = new CompensatedSum();
  for (let i = 0; i < v.length; i++) {
    const t = v[i] / scale;
    s.add(t * t);
  }
  return { scale, sum: s.value };
}

/**
 * Observed and predicted values divided by one power of two (exact), with residuals and the
 * observed mean, or the reason no metric can be computed. Working in scaled units keeps a target
 * of 1e300 from overflowing its squares; the two-pass mean with a compensated correction keeps a
 * large offset (1e9 + small noise) from eating the deviations' digits.
 */
interface Prepared {
  n: number;
  /** The common power-of-two unit of everything below. */
  unit: number;
  observed: Float64Array;
  residuals: Float64Array;
  mean: number;
  /** Largest |observed| in units. */
  size: number;
}

function prepare(observed: ArrayLike<number>, predicted: ArrayLike<number>): Prepared | string {
  const n = observed.length;
  if (n === 0) return metricReasons.noRows();
  for (let i = 0; i < n; i++) if (!Number.isFinite(observed[i])) return metricReasons.nonFiniteObserved(observed[i], i);
  for (let i = 0; i < n; i++) if (!Number.isFinite(predicted[i])) return metricReasons.nonFinitePredicted(predicted[i], i);
  let max = 0;
  for (let i = 0; i < n; i++) max = Math.max(max, Math.abs(observed[i]), Math.abs(predicted[i]));
  const unit = powerOfTwoBelow(max);
  const o = new Float64Array(n);
  const e = new Float64Array(n);
  let size = 0;
  const sum = new CompensatedSum();
  for (let i = 0; i < n; i++) {
    o[i] = observed[i] / unit;
    e[i] = o[i] - predicted[i] / unit;
    size = Math.max(size, Math.abs(o[i]));
    sum.add(o[i]);
  }
  let mean = sum.value / n;
  const correction = new CompensatedSum();
  for (let i = 0; i < n; i++) correction.add(o[i] - mean);
  mean += correction.value / n;
  return { n, unit, observed: o, residuals: e, mean, size };
}

/**
 * Coefficient of determination, 1 - SS_res / SS_tot, with SS_tot about the observed mean.
 * Undefined (null with a reason) when there are no rows, a value is not finite, or the observed
 * values are constant or vary by no more than NEGLIGIBLE_SPREAD of their size.
 */
export function r2(observed: ArrayLike<number>, predicted: ArrayLike<number>): MetricValue {
  return r2Of(prepare(observed, predicted));
}

function r2Of(p: Prepared | string): MetricValue {
  if (typeof p === 'string') return { value: null, reason: p };
  const d = new Float64Array(p.n);
  for (let i = 0; i < p.n; i++) d[i] = p.observed[i] - p.mean;
  const tot = sumOfSquares(d);
  if (tot.sum === 0) return { value: null, reason: metricReasons.constant() };
  const spread = (tot.scale * Math.sqrt(tot.sum / p.n)) / p.size;
  if (spread <= NEGLIGIBLE_SPREAD) return { value: null, reason: metricReasons.negligibleSpread(spread) };
  const res = sumOfSquares(p.residuals);
  const ratio = res.scale / tot.scale;
  return { value: 1 - (res.sum / tot.sum) * ratio * ratio };
}

/** Root mean squared error. */
export function rmse(observed: ArrayLike<number>, predicted: ArrayLike<number>): MetricValue {
  return rmseOf(prepare(observed, predicted));
}

function rmseOf(p: Prepared | string): MetricValue {
  if (typeof p === 'string') return { value: null, reason: p };
  const res = sumOfSquares(p.residuals);
  return { value: p.unit * res.scale * Math.sqrt(res.sum / p.n) };
}

/** Mean absolute error. */
export function mae(observed: ArrayLike<number>, predicted: ArrayLike<number>): MetricValue {
  return maeOf(prepare(observed, predicted));
}

function maeOf(p: Prepared | string): MetricValue {
  if (typeof p === 'string') return { value: null, reason: p };
  const s = new CompensatedSum();
  for (let i = 0; i < p.n; i++) s.add(Math.abs(p.residuals[i]));
  return { value: p.unit * (s.value / p.n) };
}

/** Mean error, predicted minus observed: positive means the model over-predicts. */
export function bias(observed: ArrayLike<number>, predicted: ArrayLike<number>): MetricValue {
  return biasOf(prepare(observed, predicted));
}

function biasOf(p: Prepared | string): MetricValue {
  if (typeof p === 'string') return { value: null, reason: p };
  const s = new CompensatedSum();
  for (let i = 0; i < p.n; i++) s.add(-p.residuals[i]);
  return { value: p.unit * (s.value / p.n) };
}

/**
 * Whether a spread (such as a baseline's RMSE) is negligible against values as large as `size`:
 * the same rule that makes R² undefined, for ratios built on the same denominator (skill scores).
 */
export function negligibleAgainst(spread: number, size: number): boolean {
  return spread === 0 || (size > 0 && spread / size <= NEGLIGIBLE_SPREAD);
}

/** All four metrics at once. */
export function metrics(observed: ArrayLike<number>, predicted: ArrayLike<number>): MetricSet {
  if (observed.length !== predicted.length) {
    throw new Error(`metrics: ${observed.length} observed values but ${predicted.length} predictions`);
  }
  const p = prepare(observed, predicted);
  return { r2: r2Of(p), rmse: rmseOf(p), mae: maeOf(p), bias: biasOf(p), n: observed.length };
}
