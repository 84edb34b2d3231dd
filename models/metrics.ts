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
 * Coefficient of determination, 1 - SS_res / SS_tot, with SS_tot about the observed mean.
 * Undefined (null with a reason) when the observed values are constant or there are no rows.
 */
export function r2(observed: ArrayLike<number>, predicted: ArrayLike<number>): MetricValue {
  const n = observed.length;
  if (n === 0) return { value: null, reason: 'no rows' };
  let mean = 0;
  for (let i = 0; i < n; i++) mean += observed[i];
  mean /= n;
  let ssTot = 0;
  let ssRes = 0;
  for (let i = 0; i < n; i++) {
    const d = observed[i] - mean;
    ssTot += d * d;
    const e = observed[i] - predicted[i];
    ssRes += e * e;
  }
  if (ssTot === 0) return { value: null, reason: 'the observed values are constant, so R² has no denominator' };
  return { value: 1 - ssRes / ssTot };
}

/** Root mean squared error. */
export function rmse(observed: ArrayLike<number>, predicted: ArrayLike<number>): MetricValue {
  const n = observed.length;
  if (n === 0) return { value: null, reason: 'no rows' };
  let s = 0;
  for (let i = 0; i < n; i++) {
    const e = observed[i] - predicted[i];
    s += e * e;
  }
  return { value: Math.sqrt(s / n) };
}

/** Mean absolute error. */
export function mae(observed: ArrayLike<number>, predicted: ArrayLike<number>): MetricValue {
  const n = observed.length;
  if (n === 0) return { value: null, reason: 'no rows' };
  let s = 0;
  for (let i = 0; i < n; i++) s += Math.abs(observed[i] - predicted[i]);
  return { value: s / n };
}

/** Mean error, predicted minus observed: positive means the model over-predicts. */
export function bias(observed: ArrayLike<number>, predicted: ArrayLike<number>): MetricValue {
  const n = observed.length;
  if (n === 0) return { value: null, reason: 'no rows' };
  let s = 0;
  for (let i = 0; i < n; i++) s += predicted[i] - observed[i];
  return { value: s / n };
}

/** All four metrics at once. */
export function metrics(observed: ArrayLike<number>, predicted: ArrayLike<number>): MetricSet {
  if (observed.length !== predicted.length) {
    throw new Error(`metrics: ${observed.length} observed values but ${predicted.length} predictions`);
  }
  return {
    r2: r2(observed, predicted),
    rmse: rmse(observed, predicted),
    mae: mae(observed, predicted),
    bias: bias(observed, predicted),
    n: observed.length,
  };
}
