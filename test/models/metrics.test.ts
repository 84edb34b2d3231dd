import { describe, expect, it } from 'vitest';
import { bias, mae, metrics, r2, rmse } from '../../models/metrics.js';

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
