/**
 * Coverage of the holdout intervals with a forest: how often the 90% interval of the holdout R² and
 * RMSE contains the truth, for grouped holdouts of 5, 10, 20 and 40 groups. The process is
 * Friedman #1 (see friedman.ts) plus a group effect shared by a group's 5 rows (sd 1.5) and row
 * noise (sd 1); the truth is the fitted forest's own score on new groups of the same process,
 * measured on 2,000 fresh groups (10,000 rows). Beside the score step's interval (jackknife-t over
 * groups, models/intervals.ts), a 1,000-resample percentile cluster bootstrap, the method it replaced.
 * Then the CV+ prediction intervals (models/conformal.ts) from 5 folds by group of the training
 * rows, each group counting once: whether one new row of a new group falls inside its interval (a
 * hit per replicate, so binomial bounds hold), and the mean share of the 10,000 new rows inside.
 * Prints a table with 95% binomial bounds; asserts nothing.
 *
 * Run: npm run build && node dist/test/bench/coverage-bench.js [replicates]
 */
import seedrandom from 'seedrandom';
import { fitForest, predictForest, serializeForest, type Matrix } from '../../models/forest.js';
import { metrics } from '../../models/metrics.js';
import { makeContext } from '../../core/step-types.js';
import { float64Bytes } from '../../core/codec.js';
import type { FitOutput } from '../../steps/fit.js';
import type { HoldoutOutput } from '../../steps/holdout.js';
import { score, type ScoreOutput } from '../../steps/score.js';
import { friedmanMean } from './friedman.js';
import { conformalTable, cvPlus } from '../../models/conformal.js';

/**
 * CV+ over 5 folds by group of the training rows (group g in fold g mod 5), each group counting
 * once: the interval of every row of `fresh`.
 */
async function cvPlusOf(data: Rows, train: number[], fresh: Rows, seed: string): Promise<{ low: number; high: number }[]> {
  const all = [...Array(fresh.y.length).keys()];
  const folds = [];
  const mus: Float64Array[] = [];
  for (let f = 0; f < 5; f++) {
    const fit = train.filter((i) => data.group[i] % 5 !== f);
    const test = train.filter((i) => data.group[i] % 5 === f);
    const forest = await fitForest(matrix(data, fit), Float64Array.from(fit, (i) => data.y[i]), { trees: 50, maxDepth: null, minLeaf: 3, mtry: null, seed: `${seed}-fold-${f}` });
    const p = predictForest(forest, matrix(data, test));
    folds.push({ residuals: test.map((i, j) => Math.abs(data.y[i] - p[j])), groups: test.map((i) => String(data.group[i])) });
    mus.push(predictForest(forest, matrix(fresh, all)));
  }
  const table = conformalTable(folds);
  const mu = new Float64Array(5);
  return all.map((i) => {
    mus.forEach((m, f) => (mu[f] = m[i]));
    return cvPlus(table, mu, 0.9)!;
  });
}

const ROWS = 5;
const SD_GROUP = 1.5;
const SD_ROW = 1;
const NAMES = ['x1', 'x2', 'x3', 'x4', 'x5'];

type Rows = { x: number[][]; y: number[]; group: number[] };

function grouped(groups: number, rand: () => number, first = 0): Rows {
  const normal = () => Math.sqrt(-2 * Math.log(1 - rand())) * Math.cos(2 * Math.PI * rand());
  const out: Rows = { x: NAMES.map(() => []), y: [], group: [] };
  for (let g = 0; g < groups; g++) {
    const u = SD_GROUP * normal();
    for (let k = 0; k < ROWS; k++) {
      const v = NAMES.map(() => rand());
      v.forEach((value, j) => out.x[j].push(value));
      out.y.push(friedmanMean(v[0], v[1], v[2], v[3], v[4]) + u + SD_ROW * normal());
      out.group.push(first + g);
    }
  }
  return out;
}

const matrix = (r: Rows, rows: number[]): Matrix => ({ columns: r.x.map((c) => Float64Array.from(rows, (i) => c[i])), names: NAMES, rows: rows.length });

/** Percentile bootstrap over groups (the former method), 5th and 95th percentiles. */
function percentile(observed: number[], predicted: number[], groupOf: number[], rand: () => number): { r2: [number, number]; rmse: [number, number] } {
  const byGroup = new Map<number, number[]>();
  groupOf.forEach((g, k) => byGroup.set(g, [...(byGroup.get(g) ?? []), k]));
  const units = [...byGroup.values()];
  const r2: number[] = [];
  const rmse: number[] = [];
  for (let b = 0; b < 1000; b++) {
    const o: number[] = [];
    const p: number[] = [];
    for (let u = 0; u < units.length; u++) {
      for (const k of units[Math.floor(rand() * units.length)]) {
        o.push(observed[k]);
        p.push(predicted[k]);
      }
    }
    const m = metrics(o, p);
    if (m.r2.value !== null) r2.push(m.r2.value);
    if (m.rmse.value !== null) rmse.push(m.rmse.value);
  }
  const q = (v: number[], p: number) => {
    const s = [...v].sort((a, b) => a - b);
    const h = (s.length - 1) * p;
    const lo = Math.floor(h);
    return s[lo] + (h - lo) * (s[Math.min(lo + 1, s.length - 1)] - s[lo]);
  };
  return { r2: [q(r2, 0.05), q(r2, 0.95)], rmse: [q(rmse, 0.05), q(rmse, 0.95)] };
}

/** Wilson 95% interval of a proportion, as text. */
function wilson(hits: number, n: number): string {
  const p = hits / n;
  const z = 1.959964;
  const centre = (p + (z * z) / (2 * n)) / (1 + (z * z) / n);
  const half = (z * Math.sqrt((p * (1 - p)) / n + (z * z) / (4 * n * n))) / (1 + (z * z) / n);
  return `${p.toFixed(2)} (${(centre - half).toFixed(2)}–${(centre + half).toFixed(2)})`;
}

async function main() {
  const replicates = Number(process.argv[2] ?? 100);
  const rand = seedrandom.alea('coverage-bench');
  // the population variance of y, from a large sample
  const big = grouped(40_000, rand);
  const meanY = big.y.reduce((a, b) => a + b, 0) / big.y.length;
  const varY = big.y.reduce((s, v) => s + (v - meanY) ** 2, 0) / big.y.length;
  console.log(`forest of 50 trees (min_leaf 3); ${replicates} replicates per row; truth on 2,000 new groups; nominal 90%; Wilson 95% bounds`);
  console.log('| holdout groups | R², jackknife-t | RMSE, jackknife-t | R², percentile bootstrap | RMSE, percentile bootstrap | prediction interval, one new row | prediction interval, mean share of new rows |');
  console.log('|---:|---|---|---|---|---|---|');
  for (const held of [5, 10, 20, 40]) {
    const hits = { r2: 0, rmse: 0, r2b: 0, rmseb: 0, pi: 0 };
    let piShare = 0;
    for (let rep = 0; rep < replicates; rep++) {
      const data = grouped(held * 5, rand);
      const test = [...Array(held * ROWS).keys()];
      const train = [...Array(data.y.length - test.length).keys()].map((i) => i + test.length);
      const forest = await fitForest(matrix(data, train), Float64Array.from(train, (i) => data.y[i]), { trees: 50, maxDepth: null, minLeaf: 3, mtry: null, seed: `rep-${held}-${rep}` });
      const fresh = grouped(2000, rand);
      const all = [...Array(fresh.y.length).keys()];
      const p = predictForest(forest, matrix(fresh, all));
      let sse = 0;
      for (let i = 0; i < p.length; i++) sse += (fresh.y[i] - p[i]) ** 2;
      const truth = { r2: 1 - sse / p.length / varY, rmse: Math.sqrt(sse / p.length) };
      const frame = {
        rows: data.y.length,
        columns: [
          ...NAMES.map((name, j) => ({ name, type: 'number' as const, values: Float64Array.from(data.x[j]) })),
          { name: 'y', type: 'number' as const, values: Float64Array.from(data.y) },
          { name: 'g', type: 'string' as const, values: data.group.map(String) },
        ],
      };
      const fitted: FitOutput = {
        model: 'forest',
        kind: 'random_forest',
        cell: {},
        used: {},
        design: { predictors: NAMES, names: NAMES, impute: {}, standardize: {}, oneHot: {} },
        trainingPredictions: float64Bytes(predictForest(forest, matrix(data, train))),
        bytes: serializeForest(forest),
        oobR2: null,
        trainingRows: train.length,
        ranges: {},
      };
      const split: HoldoutOutput = { train, test, by: 'groups', testGroups: held, trainGroups: held * 4, cutoff: null, gapRows: 0, units: { kind: 'group', holdout: [], training: 0 } };
      const ctx = makeContext({ key: 'bench', seed: 1, seedKey: `bench-${held}-${rep}`, locator: {} }, { warn: () => {}, workers: 1 });
      const out = (await score.run([{ frame, notes: { rowsIn: 0, rowsOut: 0, detail: '' } }, split, fitted], { target: 'y', targetScale: null, groups: 'g', units: 'g' }, ctx)) as ScoreOutput;
      const inside = (iv: { low: number | null; high: number | null }, t: number) => iv.low !== null && iv.high !== null && iv.low <= t && t <= iv.high;
      if (inside(out.intervals.r2, truth.r2)) hits.r2++;
      if (inside(out.intervals.rmse, truth.rmse)) hits.rmse++;
      const b = percentile(out.observed, out.predictions, test.map((i) => data.group[i]), rand);
      if (b.r2[0] <= truth.r2 && truth.r2 <= b.r2[1]) hits.r2b++;
      if (b.rmse[0] <= truth.rmse && truth.rmse <= b.rmse[1]) hits.rmseb++;
      const bounds = await cvPlusOf(data, train, fresh, `rep-${held}-${rep}`);
      const within = bounds.map((iv, i) => iv.low <= fresh.y[i] && fresh.y[i] <= iv.high);
      if (within[0]) hits.pi++;
      piShare += within.filter(Boolean).length / within.length;
    }
    console.log(`| ${held} | ${wilson(hits.r2, replicates)} | ${wilson(hits.rmse, replicates)} | ${wilson(hits.r2b, replicates)} | ${wilson(hits.rmseb, replicates)} | ${wilson(hits.pi, replicates)} | ${(piShare / replicates).toFixed(3)} |`);
  }
}

await main();
