/**
 * Holdout intervals from few units: Student's t quantiles and the jackknife-t intervals, checked
 * against R (numbers and the commands that printed them beside each check).
 */
import { describe, expect, it } from 'vitest';
import { holdoutIntervals, tCdf, tQuantile, unitSums } from '../../models/intervals.js';
import { metrics } from '../../models/metrics.js';

/** The metrics' own point values of some rows, for the intervals to hold. */
const pointsOf = (o: number[], p: number[]) => {
  const m = metrics(o, p);
  return { r2: m.r2.value, rmse: m.rmse.value, mae: m.mae.value, bias: m.bias.value };
};

describe('Student t quantiles', () => {
  // R 4.2 (Debian r-base-core): for (df in c(1,2,3,4,8,20,100)) for (p in c(0.95, 0.975, 0.995)) cat(sprintf("[%g, %g, %.15g],\n", p, df, qt(p, df)))
  const R_QT: [number, number, number][] = [
    [0.95, 1, 6.31375151467504], [0.975, 1, 12.7062047361747], [0.995, 1, 63.6567411628715],
    [0.95, 2, 2.91998558035372], [0.975, 2, 4.30265272974946], [0.995, 2, 9.92484320091829],
    [0.95, 3, 2.35336343480182], [0.975, 3, 3.18244630528371], [0.995, 3, 5.84090930973335],
    [0.95, 4, 2.13184678632665], [0.975, 4, 2.77644510519779], [0.995, 4, 4.60409487134999],
    [0.95, 8, 1.8595480375309], [0.975, 8, 2.30600413520417], [0.995, 8, 3.3553873313334],
    [0.95, 20, 1.72471824292079], [0.975, 20, 2.08596344726586], [0.995, 20, 2.84533970978611],
    [0.95, 100, 1.66023432608534], [0.975, 100, 1.98397151852355], [0.995, 100, 2.62589052143802],
  ];

  it("match R's qt to 1e-9 relative, and are symmetric", () => {
    for (const [p, df, q] of R_QT) {
      expect(Math.abs(tQuantile(p, df) - q) / q, `qt(${p}, ${df})`).toBeLessThan(1e-9);
      expect(tQuantile(1 - p, df)).toBeCloseTo(-q, 9);
    }
    expect(tQuantile(0.5, 7)).toBe(0);
    expect(tCdf(0, 3)).toBeCloseTo(0.5, 14);
  });

  it('are NaN outside (0, 1) or for no degrees of freedom', () => {
    expect([tQuantile(0, 3), tQuantile(1, 3), tQuantile(0.9, 0)].every(Number.isNaN)).toBe(true);
  });
});

describe('jackknife-t holdout intervals', () => {
  // the data and reference of test/models/fixtures/jackknife-intervals.R (Rscript, R 4.2): 11 rows in 5 groups
  const obs = [3.1, 2.4, 5.0, 4.2, 6.3, 5.9, 1.2, 2.2, 3.3, 7.5, 6.1];
  const pred = [2.8, 2.9, 4.1, 4.6, 5.7, 6.6, 1.9, 2.0, 3.9, 6.4, 6.0];
  const groups = [[0, 1, 2], [3, 4], [5, 6, 7], [8], [9, 10]];
  const R_REF = {
    r2: [0.783259336119421, 0.948988415203157],
    rmse: [0.534913468028127, 0.725690866623321],
    mae: [0.519916085644627, 0.591481336407855],
    bias: [-0.462240940219102, 0.407695485673647],
  };

  it('match an independent R implementation to 1e-12', () => {
    const iv = holdoutIntervals(unitSums(groups, obs, pred), 0.9, pointsOf(obs, pred));
    for (const m of ['r2', 'rmse', 'mae', 'bias'] as const) {
      expect(Math.abs(iv[m].low! - R_REF[m][0]), `${m} low`).toBeLessThan(1e-12);
      expect(Math.abs(iv[m].high! - R_REF[m][1]), `${m} high`).toBeLessThan(1e-12);
    }
  });

  it('give no interval from one unit, nor on a log scale around a perfect fit', () => {
    const one = holdoutIntervals(unitSums([[0, 1, 2]], obs, pred), 0.9, pointsOf(obs, pred));
    expect(one.rmse).toEqual({ low: null, high: null });
    const perfect = holdoutIntervals(unitSums(groups, obs, obs), 0.9, pointsOf(obs, obs));
    expect([perfect.r2, perfect.rmse, perfect.mae]).toEqual([
      { low: null, high: null },
      { low: null, high: null },
      { low: null, high: null },
    ]);
    expect(perfect.bias).toEqual({ low: 0, high: 0 });
  });

  it('stay exact for observations offset by 1e9 (sums centred on the holdout mean)', () => {
    const a = holdoutIntervals(unitSums(groups, obs, pred), 0.9, pointsOf(obs, pred));
    const o9 = obs.map((v) => v + 1e9);
    const p9 = pred.map((v) => v + 1e9);
    const b = holdoutIntervals(unitSums(groups, o9, p9), 0.9, pointsOf(o9, p9));
    expect(Math.abs(b.r2.low! - a.r2.low!)).toBeLessThan(1e-6);
    expect(Math.abs(b.rmse.high! - a.rmse.high!)).toBeLessThan(1e-6);
  });

  it('scale with targets near 1e160 and 1e-170 instead of vanishing (squares are taken on values brought near 1)', () => {
    const a = holdoutIntervals(unitSums(groups, obs, pred), 0.9, pointsOf(obs, pred));
    for (const f of [1e160, 1e-170]) {
      const o = obs.map((v) => v * f);
      const p = pred.map((v) => v * f);
      const b = holdoutIntervals(unitSums(groups, o, p), 0.9, pointsOf(o, p));
      expect(Math.abs(b.r2.low! - a.r2.low!), `r2 at ${f}`).toBeLessThan(1e-12);
      expect(Math.abs(b.rmse.high! / f - a.rmse.high!) / a.rmse.high!, `rmse at ${f}`).toBeLessThan(1e-12);
      expect(Math.abs(b.bias.low! / f - a.bias.low!) / Math.abs(a.bias.low!), `bias at ${f}`).toBeLessThan(1e-12);
    }
  });

  it('always hold the point value, also with no spread to measure (every group the same size of error)', () => {
    // seeded cases where each group's errors are +e and −e around varied values: every leave-one-out
    // MAE is e, so the interval has no width and must sit on the metric's own value
    let seed = 7;
    const next = () => ((seed = (seed * 16807) % 2147483647) / 2147483647);
    for (let c = 0; c < 500; c++) {
      const e = next();
      const o: number[] = [];
      const p: number[] = [];
      const g: number[][] = [];
      for (let k = 0; k < 4; k++) {
        const v = next() * 10;
        const w = v + next();
        g.push([o.length, o.length + 1]);
        o.push(v, w);
        p.push(v + e, w - e);
      }
      const pts = pointsOf(o, p);
      const iv = holdoutIntervals(unitSums(g, o, p), 0.9, pts);
      for (const m of ['r2', 'rmse', 'mae', 'bias'] as const) {
        if (iv[m].low === null || pts[m] === null) continue;
        expect(iv[m].low! <= pts[m]! && pts[m]! <= iv[m].high!, `${m} case ${c}`).toBe(true);
      }
    }
  });
});
