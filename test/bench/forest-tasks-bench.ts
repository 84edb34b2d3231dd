/**
 * Cluster benchmark of one big final forest: a 500-tree random forest on Friedman #1 data (see
 * friedman.ts), fitted locally and under the Slurm executor whole or as tasks of trees. Cross-
 * validation runs once, locally, to fill the cache; then only the final fit is recomputed (what
 * follows it comes from the cache when the fit's output is the same), so the times compare the fit alone. Checks the fit's output hash is the same every
 * way; prints figures, asserts none. Needs a running Slurm cluster (`.ci/slurm-up` starts one).
 *
 * Run: npm run bench:slurm   (or: npm run build && node dist/test/bench/forest-tasks-bench.js [rows])
 */
import { spawnSync } from 'node:child_process';
import { mkdirSync, mkdtempSync, readFileSync, rmSync, statSync, writeFileSync } from 'node:fs';
import { availableParallelism, tmpdir } from 'node:os';
import { join } from 'node:path';
import { fileURLToPath } from 'node:url';
import { Cache } from '../../runner/cache.js';
import { FRIEDMAN_NAMES, friedman1 } from './friedman.js';

const root = join(fileURLToPath(import.meta.url), '..', '..', '..', '..');
const bin = join(root, 'bin', 'dendrolog.js');
const TREES = 500;

interface Manifest {
  steps: { id: string; kind: string; key: string; output: string }[];
  timing: { steps: { id: string; status: string; seconds: number }[] };
}

function run(work: string, args: string[]): { wall: number; out: string; manifest: Manifest } {
  const t0 = performance.now();
  const r = spawnSync(process.execPath, [bin, 'run', 'forest-tasks.yaml', '--cache', 'cache', '--out', 'out', ...args], { cwd: work, encoding: 'utf8' });
  const wall = (performance.now() - t0) / 1000;
  if (r.status !== 0) throw new Error(`run failed: ${r.stderr}`);
  return { wall, out: r.stdout, manifest: JSON.parse(readFileSync(join(work, 'out', 'run-record.json'), 'utf8')) as Manifest };
}

/**
 * Removes the final fit from the cache, so the next run fits again; what follows it comes from the
 * cache as long as the fit's output is the same, which the run then shows.
 */
function forgetFit(work: string, m: Manifest): void {
  new Cache(join(work, 'cache')).discard(m.steps.find((s) => s.kind === 'fit')!);
}

function main() {
  const rows = Number(process.argv[2] ?? 200_000);
  const work = mkdtempSync(join(tmpdir(), 'dendrolog-forest-tasks-'));
  try {
    const { x, y } = friedman1(rows, 'forest-tasks-bench');
    const lines = [[...FRIEDMAN_NAMES, 'y'].join(',')];
    for (let r = 0; r < rows; r++) lines.push([...x.columns.map((c) => c[r]), y[r]].join(','));
    mkdirSync(join(work, 'data'));
    writeFileSync(join(work, 'data', 'friedman.csv'), lines.join('\n') + '\n');
    writeFileSync(
      join(work, 'forest-tasks.yaml'),
      [
        'dendrolog: 1',
        'name: big-forest',
        'seed: 5',
        'sources:',
        '  obs:',
        '    file: data/friedman.csv',
        `    columns: {${[...FRIEDMAN_NAMES, 'y'].map((n) => `${n}: number`).join(', ')}}`,
        'target: y',
        `predictors: [${FRIEDMAN_NAMES.join(', ')}]`,
        'models:',
        `  forest: {kind: random_forest, grid: {trees: ${TREES}, min_leaf: 5}}`,
        'evaluation:',
        // a small holdout keeps the explanation of the first run short: the fit is what is timed
        '  holdout: {fraction: 0.02}',
        '  folds: {k: 2}',
        '',
      ].join('\n'),
    );
    const cores = availableParallelism();
    console.log(`machine: ${cores} cores; Slurm: ${spawnSync('sinfo', ['-V'], { encoding: 'utf8' }).stdout.trim()}, one node; Friedman #1, ${rows.toLocaleString('en')} rows, ${TREES} trees`);
    const first = run(work, ['--workers', String(cores)]);
    const fitOf = (m: Manifest) => m.steps.find((s) => s.kind === 'fit')!;
    const fitSeconds = (m: Manifest) => m.timing.steps.find((t) => t.id === fitOf(m).id)!.seconds;
    const reference = fitOf(first.manifest).output;
    const fitKey = fitOf(first.manifest).key;
    const entryBytes = statSync(join(work, 'cache', 'fit', fitKey)).size;
    console.log(`local, first run (cross-validation and all): ${first.wall.toFixed(1)} s wall, of which the fit ${fitSeconds(first.manifest).toFixed(1)} s; the fit's cache entry is ${(entryBytes / 2 ** 20).toFixed(0)} MiB`);
    const ways: [string, string[]][] = [
      [`local, ${cores} threads`, ['--workers', String(cores)]],
      [`Slurm, whole fit in one task of ${cores} cores`, ['--executor', 'slurm', '--slurm-cpus', String(cores), '--slurm-trees-per-task', String(TREES)]],
      ['Slurm, default task size, 1 core per task', ['--executor', 'slurm']],
      ['Slurm, --slurm-trees-per-task 100, 1 core per task', ['--executor', 'slurm', '--slurm-trees-per-task', '100']],
    ];
    let last = first.manifest;
    for (const [label, args] of ways) {
      forgetFit(work, last);
      const r = run(work, args);
      last = r.manifest;
      const tasks = /submitted 1 step in (\d+) tasks/.exec(r.out)?.[1] ?? '1';
      const arrayWall = /steps? done on Slurm in ([\d.]+) s/.exec(r.out)?.[1];
      const recomputed = r.manifest.timing.steps.filter((t) => t.status === 'ran').length;
      const same = fitOf(r.manifest).output === reference && recomputed === 1 ? 'same output hash, so all else came from the cache' : 'OUTPUT DIFFERS';
      console.log(
        `${label}: fit ${arrayWall ? `array ${arrayWall} s wall (${tasks} task${tasks === '1' ? '' : 's'}), ` : ''}${fitSeconds(r.manifest).toFixed(1)} s of step time; whole rerun ${r.wall.toFixed(1)} s; ${same}`,
      );
    }
  } finally {
    rmSync(work, { recursive: true, force: true });
  }
}

main();
