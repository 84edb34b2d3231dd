/**
 * CV+ prediction intervals (models/conformal.ts): against an independent R implementation written
 * from the definition (test/models/fixtures/cv-plus.R), against the definition by brute force, and
 * by simulation, whose coverage must lie within a binomial tolerance of the nominal level.
 */
import seedrandom from 'seedrandom';
import { describe, expect, it } from 'vitest';
import { conformalTable, cvPlus, unitsNeeded, type FoldResiduals } from '../../models/conformal.js';
import { fitLinear, predictLinear } from '../../models/linear.js';

/** A one-predictor matrix. */
const matrixOf = (x: number[]) => ({ columns: [Float64Array.from(x)], names: ['x'], rows: x.length });

/**
 * K-fold fits of a straight line: per fold, the residuals of the rows it leaves out and a predictor
 * for new x. `fold[i]` is row i's fold; `groups[i]` its group, or null for row-wise weights.
 */
function linearFolds(x: number[], y: number[], fold: number[], k: number, groups: string[] | null) {
  const folds: FoldResiduals[] = [];
  const models: ReturnType<typeof fitLinear>[] = [];
  for (let f = 0; f < k; f++) {
    const fitAt = x.map((_, i) => i).filter((i) => fold[i] !== f);
    const testAt = x.map((_, i) => i).filter((i) => fold[i] === f);
    const m = fitLinear(matrixOf(fitAt.map((i) => x[i])), Float64Array.from(fitAt.map((i) => y[i])));
    const p = predictLinear(m, matrixOf(testAt.map((i) => x[i])));
    folds.push({ residuals: testAt.map((i, j) => Math.abs(y[i] - p[j])), groups: groups ? testAt.map((i) => groups[i]) : null });
    models.push(m);
  }
  return { table: conformalTable(folds), at: (x0: number) => models.map((m) => predictLinear(m, matrixOf([x0]))[0]) };
}

describe('CV+ against R', () => {
  // R's built-in `cars` data set (Ezekiel 1930; 50 rows of speed in mph and stopping distance in ft)
  const speed = [4, 4, 7, 7, 8, 9, 10, 10, 10, 11, 11, 12, 12, 12, 12, 13, 13, 13, 13, 14, 14, 14, 14, 15, 15, 15, 16, 16, 17, 17, 17, 18, 18, 18, 18, 19, 19, 19, 20, 20, 20, 20, 20, 22, 23, 24, 24, 24, 24, 25];
  const dist = [2, 10, 4, 22, 16, 10, 18, 26, 34, 17, 28, 14, 20, 24, 28, 26, 34, 34, 46, 26, 36, 60, 80, 20, 26, 54, 32, 40, 32, 40, 50, 42, 56, 76, 84, 36, 46, 68, 32, 48, 52, 56, 64, 66, 54, 70, 92, 93, 120, 85];
  const fold = speed.map((_, i) => i % 5);
  // Rscript test/models/fixtures/cv-plus.R (R 4.2, Debian r-base-core): [x, low, high] at level 0.9
  const R_ROWS = [
    [4, -25.3219847881203, 21.999094530967],
    [10, -2.17873958710616, 45.1423397319812],
    [15, 17.1072980804056, 64.6761985654963],
    [20, 36.3933357479174, 85.0801245753114],
    [25, 55.6793734154292, 105.484050585126],
    [30, 74.9654110829409, 125.887976594941],
  ];
  // the same with groups of two rows (rows 1–2, 3–4, …), each group counting once
  const R_PAIRS = [
    [4, -29.7153205360377, 26.3924302788844],
    [10, -6.57207533502355, 49.5356754798985],
    [15, 12.8066877315814, 68.8217131474103],
    [20, 32.7249664704144, 88.1077508149221],
    [25, 52.6432452092473, 107.393788482434],
    [30, 72.5615239480803, 126.679826149946],
  ];

  it('match row-weighted bounds to 1e-9', () => {
    const { table, at } = linearFolds(speed, dist, fold, 5, null);
    expect(table.units).toBe(50);
    for (const [x0, low, high] of R_ROWS) {
      const b = cvPlus(table, at(x0), 0.9)!;
      expect(Math.abs(b.low - low), `low at ${x0}`).toBeLessThan(1e-9);
      expect(Math.abs(b.high - high), `high at ${x0}`).toBeLessThan(1e-9);
    }
  });

  it('match group-weighted bounds to 1e-9', () => {
    const groups = speed.map((_, i) => `g${Math.floor(i / 2)}`);
    const { table, at } = linearFolds(speed, dist, fold, 5, groups);
    expect(table.units).toBe(25);
    for (const [x0, low, high] of R_PAIRS) {
      const b = cvPlus(table, at(x0), 0.9)!;
      expect(Math.abs(b.low - low), `low at ${x0}`).toBeLessThan(1e-9);
      expect(Math.abs(b.high - high), `high at ${x0}`).toBeLessThan(1e-9);
    }
  });
});

describe('CV+ by definition', () => {
  it('equals the sorted-list quantiles, ties included', () => {
    const rng = seedrandom('cv+ brute force');
    for (let rep = 0; rep < 50; rep++) {
      const k = 2 + Math.floor(rng() * 5);
      const folds: FoldResiduals[] = Array.from({ length: k }, () => ({
        // rounded, so residuals tie within and across folds
        residuals: Array.from({ length: 1 + Math.floor(rng() * 12) }, () => Math.round(rng() * 8) / 4),
        groups: null,
      }));
      const mu = Array.from({ length: k }, () => Math.round(rng() * 8) / 4);
      const table = conformalTable(folds);
      const n = table.units;
      const level = [0.5, 0.8, 0.9][rep % 3];
      const got = cvPlus(table, mu, level);
      if (n < unitsNeeded(level)) {
        expect(got).toBeNull();
        continue;
      }
      const lo = folds.flatMap((f, j) => f.residuals.map((r) => mu[j] - r)).sort((a, b) => a - b);
      const hi = folds.flatMap((f, j) => f.residuals.map((r) => mu[j] + r)).sort((a, b) => a - b);
      const alpha = 1 - level;
      // the ⌊α(n+1)⌋-th smallest and the ⌈(1−α)(n+1)⌉-th smallest, 1-based
      // (== so that −0, the negation of a sum of 0, equals 0)
      expect(got!.low == lo[Math.floor(alpha * (n + 1) + 1e-9) - 1], `low, rep ${rep}`).toBe(true);
      expect(got!.high == hi[Math.ceil((1 - alpha) * (n + 1) - 1e-9) - 1], `high, rep ${rep}`).toBe(true);
    }
  });

  it('needs level × (units + 1) ≤ units, else gives no interval', () => {
    expect([unitsNeeded(0.8), unitsNeeded(0.9), unitsNeeded(0.95)]).toEqual([4, 9, 19]);
    const table = (n: number) => conformalTable([{ residuals: Array.from({ length: n }, (_, i) => i), groups: null }]);
    expect(cvPlus(table(8), [0], 0.9)).toBeNull();
    expect(cvPlus(table(9), [0], 0.9)).toEqual({ low: -8, high: 8 });
  });
});

describe('CV+ coverage by simulation', () => {
  /** A standard normal draw (Box–Muller). */
  const normal = (rng: () => number) => Math.sqrt(-2 * Math.log(1 - rng())) * Math.cos(2 * Math.PI * rng());
  // 400 replicates, one new point each: at nominal 0.9 the share inside has a binomial sd of 0.015;
  // ±0.05 is beyond 3 sd, and CV+ is guaranteed only above 1 − 2α, so the check is two-sided but wide
  const REPS = 400;

  it('covers new rows about 90% of the time for a line with normal noise', () => {
    const rng = seedrandom('cv+ rows');
    let inside = 0;
    for (let rep = 0; rep < REPS; rep++) {
      const x = Array.from({ length: 60 }, () => rng() * 10);
      const y = x.map((v) => 2 + 3 * v + normal(rng));
      const { table, at } = linearFolds(x, y, x.map((_, i) => i % 5), 5, null);
      const x0 = rng() * 10;
      const b = cvPlus(table, at(x0), 0.9)!;
      const y0 = 2 + 3 * x0 + normal(rng);
      if (y0 >= b.low && y0 <= b.high) inside++;
    }
    expect(inside / REPS).toBeGreaterThan(0.85);
    expect(inside / REPS).toBeLessThan(0.95);
  });

  it('covers a row of a new group about 90% of the time when groups are held out and weighed once', () => {
    // 30 groups of 2 to 8 rows, a group effect of sd 1 and row noise of sd 0.5; folds by group
    const rng = seedrandom('cv+ groups');
    let inside = 0;
    let rowWise = 0;
    for (let rep = 0; rep < REPS; rep++) {
      const x: number[] = [];
      const y: number[] = [];
      const g: string[] = [];
      const fold: number[] = [];
      for (let j = 0; j < 30; j++) {
        const u = normal(rng);
        const rows = 2 + Math.floor(rng() * 7);
        for (let r = 0; r < rows; r++) {
          const v = rng() * 10;
          x.push(v);
          y.push(2 + 3 * v + u + 0.5 * normal(rng));
          g.push(`g${j}`);
          fold.push(j % 5);
        }
      }
      const grouped = linearFolds(x, y, fold, 5, g);
      const x0 = rng() * 10;
      const y0 = 2 + 3 * x0 + normal(rng) + 0.5 * normal(rng);
      const b = cvPlus(grouped.table, grouped.at(x0), 0.9)!;
      if (y0 >= b.low && y0 <= b.high) inside++;
      const rows = cvPlus(linearFolds(x, y, fold, 5, null).table, grouped.at(x0), 0.9)!;
      if (y0 >= rows.low && y0 <= rows.high) rowWise++;
    }
    expect(inside / REPS).toBeGreaterThan(0.85);
    expect(inside / REPS).toBeLessThan(0.95);
    // row weights let big groups speak for more than their share; here that changes little, but both must hold
    expect(rowWise / REPS).toBeGreaterThan(0.85);
  });
});
