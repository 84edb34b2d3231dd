/**
 * Benchmark: dendrolog's forest against ml-random-forest 2.1.0 and R's ranger on Friedman #1.
 *
 * Run with `npm run bench` (builds, then runs dist/test/bench/forest-bench.js). Sizes can be chosen
 * with DENDROLOG_BENCH_SIZES=1000,4000 (default 1000,4000,20000,100000,1000000). ranger runs up to
 * DENDROLOG_BENCH_RANGER_MAX_ROWS rows (default 100000; at 1,000,000 rows it takes many minutes).
 * Up to 100,000 rows each dendrolog and ranger fit is run DENDROLOG_BENCH_REPEATS times (default 2)
 * and the fastest time is shown, because a shared 2-core machine makes single timings noisy.
 *
 * Every fit runs in its own child process, so each peak-memory figure is that process's own maximum
 * resident set size (data, fit and prediction together) and no run warms up another.
 */
import { spawnSync } from 'node:child_process';
import { mkdtempSync, rmSync, writeFileSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import { fileURLToPath } from 'node:url';
import { DEFAULT_MIN_LEAF, fitForest, predictForest } from '../../models/forest.js';
import { r2 } from '../../models/metrics.js';
import { friedman1 } from './friedman.js';

const TREES = 100;
const MTRY = 3;
const THREADS = 2;
const TEST_ROWS = 5000;
const ML_RF_TIMEOUT_S = 60;
/** ml-random-forest's split search is quadratic in rows: 4,000 rows is already past a minute. */
const ML_RF_MAX_ROWS = 4000;

interface Measured {
  seconds: number;
  r2: number;
  peakMiB: number;
  /** ranger only: the whole Rscript process, including start-up and reading the CSV. */
  processSeconds?: number;
}

type Outcome = Measured | { skipped: string };

function data(rows: number): { train: ReturnType<typeof friedman1>; test: ReturnType<typeof friedman1> } {
  return { train: friedman1(rows, 'bench-train'), test: friedman1(TEST_ROWS, 'bench-test') };
}

function peakMiB(): number {
  return process.resourceUsage().maxRSS / 1024;
}

/** ranger's node rule: nodes of 5 (its min.node.size) or fewer samples are not split; leaves may be smaller. */
const RANGER_RULE = { minLeaf: 1, minSplit: 6 };

async function childDendrolog(rows: number, rangerRule: boolean): Promise<Measured> {
  const { train, test } = data(rows);
  const t0 = performance.now();
  const forest = await fitForest(train.x, train.y, {
    trees: TREES,
    maxDepth: null,
    minLeaf: DEFAULT_MIN_LEAF,
    mtry: MTRY,
    seed: 'bench',
    workers: THREADS,
    ...(rangerRule ? RANGER_RULE : {}),
  });
  const pred = predictForest(forest, test.x);
  const seconds = (performance.now() - t0) / 1000;
  return { seconds, r2: r2(test.y, pred).value ?? NaN, peakMiB: peakMiB() };
}

async function childMlRandomForest(rows: number): Promise<Measured> {
  const { RandomForestRegression } = await import('ml-random-forest');
  const { train, test } = data(rows);
  const toRows = (x: { columns: Float64Array[]; rows: number }): number[][] =>
    Array.from({ length: x.rows }, (_, r) => x.columns.map((c) => c[r]));
  const trainRows = toRows(train.x);
  const testRows = toRows(test.x);
  const t0 = performance.now();
  // maxDepth is left at ml-cart's default (Infinity): passing undefined gives constant predictions.
  const rf = new RandomForestRegression({
    nEstimators: TREES,
    maxFeatures: MTRY,
    replacement: true,
    useSampleBagging: true,
    noOOB: true,
    seed: 42,
    treeOptions: { minNumSamples: DEFAULT_MIN_LEAF },
  });
  rf.train(trainRows, Array.from(train.y));
  const pred = rf.predict(testRows) as number[];
  const seconds = (performance.now() - t0) / 1000;
  return { seconds, r2: r2(test.y, Float64Array.from(pred)).value ?? NaN, peakMiB: peakMiB() };
}

function writeCsv(file: string, d: ReturnType<typeof friedman1>): void {
  const lines: string[] = [[...d.x.names, 'y'].join(',')];
  for (let r = 0; r < d.x.rows; r++) {
    const row = d.x.columns.map((c) => String(c[r]));
    row.push(String(d.y[r]));
    lines.push(row.join(','));
  }
  writeFileSync(file, lines.join('\n') + '\n');
}

const RANGER_SCRIPT = `
args <- commandArgs(trailingOnly = TRUE)
suppressMessages(library(ranger))
train <- read.csv(args[1]); test <- read.csv(args[2])
t0 <- proc.time()[["elapsed"]]
fit <- ranger(y ~ ., data = train, num.trees = ${TREES}, mtry = ${MTRY}, num.threads = ${THREADS}, seed = 1, verbose = FALSE)
pred <- predict(fit, test, num.threads = ${THREADS})$predictions
secs <- proc.time()[["elapsed"]] - t0
r2 <- 1 - sum((test$y - pred)^2) / sum((test$y - mean(test$y))^2)
hwm <- grep("^VmHWM", readLines("/proc/self/status"), value = TRUE)
kb <- as.numeric(gsub("[^0-9]", "", hwm))
cat(sprintf("RESULT %.6f %.6f %.1f\\n", secs, r2, kb / 1024))
`;

function rangerAvailable(): boolean {
  const r = spawnSync('Rscript', ['-e', 'library(ranger)'], { encoding: 'utf8' });
  return r.status === 0;
}

function runRanger(rows: number, dir: string): Outcome {
  const { train, test } = data(rows);
  const trainCsv = join(dir, `train-${rows}.csv`);
  const testCsv = join(dir, 'test.csv');
  writeCsv(trainCsv, train);
  writeCsv(testCsv, test);
  const script = join(dir, 'ranger-bench.R');
  writeFileSync(script, RANGER_SCRIPT);
  const t0 = performance.now();
  const res = spawnSync('Rscript', [script, trainCsv, testCsv], { encoding: 'utf8', timeout: 3600_000 });
  const processSeconds = (performance.now() - t0) / 1000;
  rmSync(trainCsv);
  const m = /RESULT (\S+) (\S+) (\S+)/.exec(res.stdout ?? '');
  if (!m) return { skipped: `failed: ${(res.stderr ?? '').trim().split('\n').slice(-2).join(' ')}` };
  return { seconds: Number(m[1]), r2: Number(m[2]), peakMiB: Number(m[3]), processSeconds };
}

type ChildKind = 'dendrolog' | 'dendrolog-ranger-rule' | 'ml-rf';

/** Fastest of `repeats` runs (its R²; the largest peak of all runs), or the first failure. */
function best(repeats: number, run: () => Outcome): Outcome {
  let fastest: Measured | undefined;
  let peak = 0;
  for (let k = 0; k < repeats; k++) {
    const o = run();
    if ('skipped' in o) return o;
    peak = Math.max(peak, o.peakMiB);
    if (fastest === undefined || o.seconds < fastest.seconds) fastest = o;
  }
  return { ...(fastest as Measured), peakMiB: peak };
}

function runChild(kind: ChildKind, rows: number, timeoutS: number): Outcome {
  const self = fileURLToPath(import.meta.url);
  const res = spawnSync(process.execPath, [self, '--child', kind, String(rows)], {
    encoding: 'utf8',
    timeout: timeoutS * 1000,
    killSignal: 'SIGKILL',
    maxBuffer: 1 << 20,
  });
  if (res.error && (res.error as NodeJS.ErrnoException).code === 'ETIMEDOUT') return { skipped: `did not finish in ${timeoutS} s` };
  if (res.signal === 'SIGKILL') return { skipped: `did not finish in ${timeoutS} s` };
  const line = (res.stdout ?? '').split('\n').find((l) => l.startsWith('RESULT '));
  if (res.status !== 0 || line === undefined) return { skipped: `failed: ${(res.stderr ?? '').trim().split('\n').slice(-1)[0] ?? ''}` };
  return JSON.parse(line.slice(7)) as Measured;
}

const fmtS = (s: number): string => (s < 10 ? s.toFixed(2) : s.toFixed(1));
/** A signed R² difference, with no "-0.0000". */
const fmtDiff = (d: number): string => {
  const t = d.toFixed(4);
  return /^-0\.0+$/.test(t) ? t.slice(1) : d >= 0 ? `+${t}` : t;
};
const cell = (o: Outcome | undefined, withProcess = false): string[] => {
  if (o === undefined) return ['', '', ''];
  if ('skipped' in o) return [o.skipped, '', ''];
  const t = withProcess && o.processSeconds !== undefined ? `${fmtS(o.seconds)} (${fmtS(o.processSeconds)})` : fmtS(o.seconds);
  return [t, o.peakMiB.toFixed(0), o.r2.toFixed(4)];
};

function table(header: string[], rows: string[][]): string {
  const widths = header.map((h, i) => Math.max(h.length, ...rows.map((r) => r[i].length)));
  const line = (r: string[]): string => '| ' + r.map((c, i) => (i === 0 ? c.padStart(widths[i]) : c.padEnd(widths[i]))).join(' | ') + ' |';
  return [line(header), '|' + widths.map((w) => '-'.repeat(w + 2)).join('|') + '|', ...rows.map(line)].join('\n');
}

async function main(): Promise<void> {
  const sizes = (process.env.DENDROLOG_BENCH_SIZES ?? '1000,4000,20000,100000,1000000').split(',').map(Number);
  const rangerMax = Number(process.env.DENDROLOG_BENCH_RANGER_MAX_ROWS ?? 100000);
  const haveRanger = rangerAvailable();
  const dir = mkdtempSync(join(tmpdir(), 'dendrolog-bench-'));
  const repeatsSmall = Number(process.env.DENDROLOG_BENCH_REPEATS ?? 2);
  const results: { rows: number; d: Outcome; dr?: Outcome; ml?: Outcome; rg?: Outcome }[] = [];
  try {
    for (const rows of sizes) {
      const repeats = rows <= 100000 ? repeatsSmall : 1;
      process.stderr.write(`${rows} rows: dendrolog...`);
      const d = best(repeats, () => runChild('dendrolog', rows, 3600));
      const dr = rows <= 100000 ? best(repeats, () => runChild('dendrolog-ranger-rule', rows, 3600)) : { skipped: 'not run' };
      let ml: Outcome | undefined;
      if (rows <= ML_RF_MAX_ROWS) {
        process.stderr.write(' ml-random-forest...');
        ml = runChild('ml-rf', rows, ML_RF_TIMEOUT_S);
      } else ml = { skipped: 'not run (quadratic split search)' };
      let rg: Outcome | undefined;
      if (!haveRanger) rg = { skipped: 'R/ranger not installed' };
      else if (rows > rangerMax) rg = { skipped: `not run (> ${rangerMax} rows)` };
      else {
        process.stderr.write(' ranger...');
        rg = best(repeats, () => runRanger(rows, dir));
      }
      process.stderr.write(' done\n');
      results.push({ rows, d, dr, ml, rg });
    }
  } finally {
    rmSync(dir, { recursive: true, force: true });
  }

  const speed = (a: Outcome | undefined, b: Outcome | undefined): string =>
    a && b && !('skipped' in a) && !('skipped' in b) ? `${(b.seconds / a.seconds).toFixed(1)}×` : '';
  console.log(
    `Friedman #1 (10 uniform predictors, noise sd 1), ${TEST_ROWS} test rows; ${TREES} trees, mtry ${MTRY}, ` +
      `${THREADS} threads where the library has them. Times are fit + predict in seconds; peak is the maximum RSS ` +
      `of the process in MiB (data, fit and prediction); R² is on the test rows.\n`,
  );
  const header = [
    'rows',
    'dendrolog s',
    'peak MiB',
    'R²',
    "ranger's rule s",
    'R²',
    'ml-random-forest s',
    'peak MiB',
    'R²',
    'ranger s (whole Rscript)',
    'peak MiB',
    'R²',
    'vs ranger',
    'rule vs ranger',
    'vs ml-rf',
  ];
  const body = results.map((r) => [
    r.rows.toLocaleString('en-US'),
    ...cell(r.d),
    ...[cell(r.dr)[0], cell(r.dr)[2]],
    ...cell(r.ml),
    ...cell(r.rg, true),
    speed(r.d, r.rg),
    speed(r.dr, r.rg),
    speed(r.d, r.ml),
  ]);
  console.log(table(header, body));
  console.log(`
Like with like:
- dendrolog: defaults except trees ${TREES} and mtry ${MTRY}: bootstrap of n rows with replacement, mtry sampled at every split,
  min_leaf ${DEFAULT_MIN_LEAF} (every leaf holds at least ${DEFAULT_MIN_LEAF} draws), unlimited depth, 256 quantile bins per feature.
- "ranger's rule": the same with ranger's node-size rule instead (min_leaf ${RANGER_RULE.minLeaf}, min_split ${RANGER_RULE.minSplit}: nodes of 5 or fewer
  draws are not split, leaves may be smaller), which is the like-with-like comparison with ranger's defaults.
- ranger ${'0.14'}+: num.trees ${TREES}, mtry ${MTRY}, num.threads ${THREADS}, defaults otherwise. Its min.node.size (5 for regression) is the
  smallest node it will still split, not a minimum leaf size: its leaves can hold a single row, so its trees are deeper than
  dendrolog's at min_leaf 5. It searches exact (unbinned) thresholds. Its time is fit + predict measured inside R with
  proc.time(); in brackets the whole Rscript process, including R start-up and reading the CSV files.
- ml-random-forest 2.1.0: nEstimators ${TREES}, maxFeatures ${MTRY}, ml-cart minNumSamples ${DEFAULT_MIN_LEAF}, one thread (it has no others). It samples
  features once per tree, not at every split, so it is a weaker model as well as a slower one. Killed after ${ML_RF_TIMEOUT_S} s.`);
  const by = new Map(results.map((r) => [r.rows, r]));
  const m = (o: Outcome | undefined): Measured | undefined => (o && !('skipped' in o) ? o : undefined);
  const lines: string[] = [];
  for (const rows of [20000, 100000]) {
    const r = by.get(rows);
    const g = m(r?.rg);
    const dr = m(r?.dr);
    if (dr && g) {
      lines.push(
        `- ${rows.toLocaleString('en-US')} rows, ranger's node rule: ${(g.seconds / dr.seconds).toFixed(1)}× ranger's speed, ` +
          `R² ${fmtDiff(dr.r2 - g.r2)} against ranger`,
      );
    }
    const d = m(r?.d);
    if (d && g) {
      const sp = g.seconds / d.seconds;
      const dr = d.r2 - g.r2;
      lines.push(
        `- ${rows.toLocaleString('en-US')} rows: ${sp.toFixed(1)}× ranger's speed (target ≥ 4×: ${sp >= 4 ? 'met' : 'not met'}); ` +
          `R² ${fmtDiff(dr)} against ranger (target ≥ −0.005: ${dr >= -0.005 ? 'met' : 'not met'})`,
      );
    }
  }
  const r4 = by.get(4000);
  const d4 = m(r4?.d);
  if (d4 && r4?.ml) {
    const ml = m(r4.ml);
    if (ml) {
      const sp = ml.seconds / d4.seconds;
      lines.push(`- 4,000 rows: ${sp.toFixed(0)}× ml-random-forest's speed (target ≥ 100×: ${sp >= 100 ? 'met' : 'not met'})`);
    } else if ('skipped' in r4.ml) {
      const sp = ML_RF_TIMEOUT_S / d4.seconds;
      lines.push(
        `- 4,000 rows: ml-random-forest ${r4.ml.skipped}, so dendrolog is more than ${sp.toFixed(0)}× faster (target ≥ 100×: ${sp >= 100 ? 'met' : 'not known'})`,
      );
    }
  }
  const a = m(by.get(20000)?.d);
  const b = m(by.get(100000)?.d);
  if (a && b) {
    const g = b.seconds / a.seconds;
    lines.push(`- 20,000 → 100,000 rows: time grows ${g.toFixed(2)}× (target ≤ 6.5×: ${g <= 6.5 ? 'met' : 'not met'})`);
  }
  const big = m(by.get(1000000)?.d);
  if (big) lines.push(`- 1,000,000 rows: peak ${(big.peakMiB / 1024).toFixed(2)} GiB (target < 2 GiB: ${big.peakMiB < 2048 ? 'met' : 'not met'})`);
  if (lines.length > 0) console.log(`\nTargets (measured, not asserted):\n${lines.join('\n')}`);
}

const childAt = process.argv.indexOf('--child');
if (childAt >= 0) {
  const kind = process.argv[childAt + 1];
  const rows = Number(process.argv[childAt + 2]);
  const result =
    kind === 'ml-rf' ? await childMlRandomForest(rows) : await childDendrolog(rows, kind === 'dendrolog-ranger-rule');
  console.log('RESULT ' + JSON.stringify(result));
} else {
  await main();
}
