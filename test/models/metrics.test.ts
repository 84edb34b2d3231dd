import { describe, expect, it } from 'vitest';
import { bias, mae, metricReasons, metrics, NEGLIGIBLE_SPREAD, r2, rmse } from '../../models/metrics.js';

// Facts of the trade (common practice): R² = 1 − SS_res / SS_tot.
describe('R²', () => {
  const y = [1, 2, 3, 4, 10];
  const mean = y.reduce((a, b) => a + b) / y.length;

  it('is 1 for perfect predictions', () => {
    expect(r2(y, y).value).toBe(1);
  });
  it('is 0 when every prediction is the observed mean', () => {
    expect(r2(y, y.map(() => mean)).value).toBeCloseTo(0, 15);
  });
  it('is negative when predictions are worse than the mean', () => {
    expect(r2(y, [10, 4, 3, 2, 1]).value).toBeLessThan(0);
  });
  it('is undefined, with a reason, for a constant target', () => {
    const m = r2([5, 5, 5], [5, 5, 4]);
    expect(m.value).toBeNull();
    expect(m.reason).toMatch(/constant/);
  });
});

describe('error metrics', () => {
  it('compute RMSE, MAE and bias (predicted minus observed) by hand', () => {
    const obs = [1, 2, 3];
    const pred = [2, 2, 5];
    expect(rmse(obs, pred).value).toBeCloseTo(Math.sqrt(5 / 3), 15);
    expect(mae(obs, pred).value).toBeCloseTo(1, 15);
    expect(bias(obs, pred).value).toBeCloseTo(1, 15);
  });
  it('refuse arrays of different lengths', () => {
    expect(() => metrics([1, 2], [1])).toThrow(/2 observed values but 1 predictions/);
  });
  it('are undefined on no rows', () => {
    expect(metrics([], []).rmse).toEqual({ value: null, reason: 'no rows' });
  });
});

// Reference answers here are exact: values are binary fractions, so BigInt arithmetic in units of
// their smallest step gives SS_tot and SS_res with no rounding at all (R² = 1 − n·Σe² / (nΣk² − (Σk)²)
// for observed values c + k·step, the textbook expansion of Σ(y − ȳ)²).
describe('stable sums', () => {
  /** A seeded sequence of integers in [-range, range], so the test data are the same on every run. */
  function ints(n: number, range: number, seed: number): number[] {
    let s = seed;
    return Array.from({ length: n }, () => {
      s = (s * 1103515245 + 12345) % 2147483648;
      return (s % (2 * range + 1)) - range;
    });
  }

  function exactR2(k: number[], m: number[]): number {
    const n = BigInt(k.length);
    const sk = k.reduce((a, v) => a + BigInt(v), 0n);
    const skk = k.reduce((a, v) => a + BigInt(v) * BigInt(v), 0n);
    const see = m.reduce((a, v) => a + BigInt(v) * BigInt(v), 0n);
    const num = n * see;
    const den = n * skk - sk * sk;
    // 1 − num/den to 18 digits, in integers, then one rounding to a float
    const scaled = ((den - num) * 10n ** 18n) / den;
    return Number(scaled) / 1e18;
  }

  it('R² of a large offset plus small deviations matches exact rational arithmetic to 1e-13', () => {
    // observed 2^30 + k·2^-20: 51 significant bits each, exactly representable; a plain running
    // sum of 2000 of them needs 61 bits and rounds, which shifts every deviation
    const step = 2 ** -20;
    const k = ints(2000, 2 ** 20, 7);
    const m = ints(2000, 2 ** 18, 11);
    const observed = k.map((v) => 2 ** 30 + v * step);
    const predicted = k.map((v, i) => 2 ** 30 + (v - m[i]) * step);
    const got = r2(observed, predicted).value!;
    expect(Math.abs(got - exactR2(k, m))).toBeLessThan(1e-13);
  });

  it('R², RMSE, MAE and bias of values near 2^1000 equal those of the same values near 1', () => {
    // multiplying by a power of two is exact, so the answers must be the small-value ones scaled
    const y = [1, 2, 3, 4, 10];
    const p = [1.5, 2, 2.5, 4, 9];
    const big = 2 ** 1000;
    const m = metrics(y.map((v) => v * big), p.map((v) => v * big));
    // by hand: ȳ = 4, SS_tot = 50, SS_res = 1.5, Σ|e| = 2, Σ(p − y) = −1
    expect(m.r2.value).toBe(1 - 1.5 / 50);
    expect(m.rmse.value! / big).toBeCloseTo(Math.sqrt(1.5 / 5), 15);
    expect(m.mae.value! / big).toBeCloseTo(2 / 5, 15);
    expect(m.bias.value! / big).toBeCloseTo(-1 / 5, 15);
  });

  it('RMSE of errors near 1e-170 does not underflow to 0 when squared', () => {
    const tiny = rmse([1e-170, 2e-170], [0, 0]);
    expect(tiny.value! / 1e-170).toBeCloseTo(Math.sqrt(2.5), 12);
  });

  it('R² is undefined for a constant 5.1, whose plain SS_tot is 1.6e-29 rather than 0', () => {
    const y = new Array(20).fill(5.1);
    const m = r2(y, y.map((v, i) => v + (i % 2 ? 1e-15 : -1e-15)));
    expect(m.value).toBeNull();
    expect(m.reason).toMatch(/constant/);
  });

  it('R² is undefined when the spread is below NEGLIGIBLE_SPREAD of the size, and defined just above it', () => {
    const size = 1e6;
    const below = [size, size + size * NEGLIGIBLE_SPREAD * 0.5 * 2, size];
    expect(r2(below, [size, size, size]).reason).toBe(
      metricReasons.negligibleSpread(r2Spread(below)),
    );
    const above = [size, size + size * 1e-9, size - size * 1e-9];
    expect(r2(above, [size, size, size]).value).not.toBeNull();
  });

  it('a non-finite prediction makes every metric undefined with the row named', () => {
    const m = metrics([1, 2, 3], [1, Infinity, 3]);
    for (const k of ['r2', 'rmse', 'mae', 'bias'] as const) expect(m[k]).toEqual({ value: null, reason: metricReasons.nonFinitePredicted(Infinity, 1) });
  });
});

/** Root mean squared deviation over largest |value|, as r2 measures it. */
function r2Spread(v: number[]): number {
  const mean = v.reduce((a, b) => a + b) / v.length;
  return Math.sqrt(v.reduce((a, b) => a + (b - mean) ** 2, 0) / v.length) / Math.max(...v.map(Math.abs));
}
