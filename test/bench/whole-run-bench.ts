/**
 * Whole-run benchmark: one `dendrolog run --no-cache --workers 2` of a one-cell recipe (Friedman #1,
 * 100 trees, mtry 3, min_leaf 3, the last 5,000 rows held out by time, 5 random folds, permutation
 * importance and partial dependence, report) beside the same protocol written with scikit-learn
 * (sklearn_protocol.py, skipped with a note when python3-sklearn or python3-pandas is missing), on
 * the same generated CSV. Prints the totals, the seconds per phase (dendrolog's as the sum of its
 * steps' seconds per kind, which run side by side), CPU time over wall time, peak memory, report
 * size, and the ratio. Prediction intervals are turned off in the recipe: the peer has none.
 * Asserts nothing.
 *
 * Run: npm run build && node dist/test/bench/whole-run-bench.js [--dendrolog-only] [training rows ...]   (default 20000 100000)
 */
import { spawnSync } from 'node:child_process';
import { existsSync, mkdirSync, mkdtempSync, readFileSync, rmSync, statSync, writeFileSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { dirname, join } from 'node:path';
import { fileURLToPath } from 'node:url';
import { FRIEDMAN_NAMES, friedman1 } from './friedman.js';

const HOLDOUT = 5000;
const here = dirname(fileURLToPath(import.meta.url));
const root = join(here, '..', '..', '..');

/** Writes the data and the recipe; returns the recipe's path. */
function prepare(dir: string, train: number): string {
  const { x, y } = friedman1(train + HOLDOUT, `whole-run-${train}`);
  const lines = [[...FRIEDMAN_NAMES, 'y', 't'].join(',')];
  for (let r = 0; r < x.rows; r++) lines.push([...x.columns.map((c) => c[r]), y[r], r].join(','));
  mkdirSync(join(dir, 'data'), { recursive: true });
  writeFileSync(join(dir, 'data', 'friedman.csv'), lines.join('\n') + '\n');
  const recipe = `dendrolog: 1
name: whole-run
seed: 1
sources:
  rows:
    file: data/friedman.csv
    columns: {${[...FRIEDMAN_NAMES.map((n) => `${n}: number`), 'y: number', 't: number'].join(', ')}}
target: y
predictors: [${FRIEDMAN_NAMES.join(', ')}]
time: t
models:
  forest: {kind: random_forest, grid: {trees: 100, mtry: 3, min_leaf: 3}}
evaluation:
  holdout: {by: time, cutoff: ${train}}
  folds: {k: 5, by: random}
  prediction_interval: false
`;
  writeFileSync(join(dir, 'whole-run.yaml'), recipe);
  return join(dir, 'whole-run.yaml');
}

/** Runs a command under GNU time when there is one: wall, CPU (user + sys) and peak memory. */
function timed(cmd: string, args: string[], cwd: string): { out: string; wall: number; cpu: number | null; peakMiB: number | null } {
  const gnuTime = existsSync('/usr/bin/time');
  const t0 = performance.now();
  const r = gnuTime
    ? spawnSync('/usr/bin/time', ['-f', 'TIME %e %U %S %M', cmd, ...args], { cwd, encoding: 'utf8', maxBuffer: 1 << 28 })
    : spawnSync(cmd, args, { cwd, encoding: 'utf8', maxBuffer: 1 << 28 });
  const wall = (performance.now() - t0) / 1000;
  if (r.status !== 0) throw new Error(`${cmd} ${args.join(' ')} failed: ${r.stderr}`);
  const m = /TIME ([\d.]+) ([\d.]+) ([\d.]+) (\d+)/.exec(r.stderr);
  return { out: r.stdout, wall, cpu: m ? Number(m[2]) + Number(m[3]) : null, peakMiB: m ? Number(m[4]) / 1024 : null };
}

function dendrologRun(train: number) {
  const dir = mkdtempSync(join(tmpdir(), 'dendrolog-whole-'));
  try {
    const recipe = prepare(dir, train);
    const out = join(dir, 'out');
    const r = timed(process.execPath, [join(root, 'bin', 'dendrolog.js'), 'run', recipe, '--no-cache', '--workers', '2', '--out', out], dir);
    const manifest = JSON.parse(readFileSync(join(out, 'run-record.json'), 'utf8')) as {
      steps: { id: string; kind: string }[];
      timing: { seconds: number; steps: { id: string; seconds: number }[] };
      models: { metrics: { holdout: { r2: { value: number } } } }[];
    };
    const kindOf = new Map(manifest.steps.map((s) => [s.id, s.kind]));
    const phase = (kinds: string[]) => manifest.timing.steps.filter((s) => kinds.includes(kindOf.get(s.id) ?? '')).reduce((a, s) => a + s.seconds, 0);
    return {
      ...r,
      phases: { explain: phase(['explain']), cv: phase(['cv_fold', 'cross_validate', 'choose']), fit: phase(['fit']), score: phase(['score']), data: phase(['source', 'model_table', 'holdout', 'folds']) },
      r2: manifest.models[0].metrics.holdout.r2.value,
      reportKiB: statSync(join(out, 'report.html')).size / 1024,
      csv: join(dir, 'data', 'friedman.csv'),
      dir,
    };
  } catch (e) {
    rmSync(dir, { recursive: true, force: true });
    throw e;
  }
}

/** The first Python that has Debian's scikit-learn and pandas (the system one first: a pyenv shim may shadow it). */
function python(): string | null {
  for (const p of ['/usr/bin/python3', 'python3']) {
    if (spawnSync(p, ['-c', 'import sklearn, pandas'], { encoding: 'utf8' }).status === 0) return p;
  }
  return null;
}

function sklearnRun(csv: string, cutoff: number) {
  const py = python();
  if (!py) return null;
  const r = timed(py, [join(root, 'test', 'bench', 'sklearn_protocol.py'), csv, String(cutoff)], dirname(csv));
  const o = JSON.parse(r.out) as { phases: Record<string, number>; r2: number };
  return { ...r, phases: o.phases, r2: o.r2 };
}

const f = (v: number | null | undefined, d = 1) => (v === null || v === undefined ? '–' : v.toFixed(d));

// --dendrolog-only: the whole run without the peer (the protocol in scikit-learn takes too long at 1,000,000 rows)
const alone = process.argv.includes('--dendrolog-only');
const sizes = process.argv.slice(2).filter((a) => a !== '--dendrolog-only').map(Number);
console.log('| training rows | dendrolog whole run | explain / cv / fit / score (step seconds) | CPU ÷ wall | peak MiB | report KiB | holdout R² | scikit-learn protocol | explain / cv / fit / score | CPU ÷ wall | holdout R² | ratio |');
console.log('|---:|---:|---|---:|---:|---:|---:|---:|---|---:|---:|---:|');
for (const train of sizes.length ? sizes : [20_000, 100_000]) {
  const d = dendrologRun(train);
  try {
    const s = alone ? null : sklearnRun(d.csv, train);
    const p = d.phases;
    const sp = s?.phases;
    console.log(
      `| ${train.toLocaleString('en')} | ${f(d.wall)} s | ${f(p.explain)} / ${f(p.cv)} / ${f(p.fit)} / ${f(p.score)} | ${d.cpu === null ? '–' : f(d.cpu / d.wall, 2)} | ${f(d.peakMiB, 0)} | ${f(d.reportKiB, 0)} | ${f(d.r2, 3)} | ` +
        (s && sp
          ? `${f(s.wall)} s | ${f(sp.explain)} / ${f(sp.cv)} / ${f(sp.fit)} / ${f(sp.score)} | ${s.cpu === null ? '–' : f(s.cpu / s.wall, 2)} | ${f(s.r2, 3)} | ${f(s.wall / d.wall, 2)}× |`
          : `${alone ? 'not run (--dendrolog-only)' : 'skipped: no python3-sklearn / python3-pandas'} | | | | |`),
    );
  } finally {
    rmSync(d.dir, { recursive: true, force: true });
  }
}
