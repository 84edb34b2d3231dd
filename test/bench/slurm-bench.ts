/**
 * Cluster benchmark: the demo recipe run locally and under the Slurm executor, each with an empty
 * cache, and the time per phase of independent steps (cross-validation, final fits, explanations);
 * then Slurm's own cost per task, from an array of tasks that do nothing but start dendrolog. The
 * figures are printed, never asserted. Needs a running Slurm cluster (`.ci/slurm-up` starts one).
 *
 * Run: npm run bench:slurm   (or: npm run build && node dist/test/bench/slurm-bench.js [cores-per-node])
 */
import { spawnSync } from 'node:child_process';
import { cpSync, mkdtempSync, readFileSync, rmSync, writeFileSync } from 'node:fs';
import { availableParallelism, tmpdir } from 'node:os';
import { join } from 'node:path';
import { fileURLToPath } from 'node:url';
import { Cache } from '../../runner/cache.js';
import { silentProgress } from '../../runner/progress.js';
import { SlurmRunner, slurmOptions, type TaskStep } from '../../runner/slurm.js';

const root = join(fileURLToPath(import.meta.url), '..', '..', '..', '..');
const bin = join(root, 'bin', 'dendrolog.js');
const PHASES = ['cv_fold', 'fit', 'explain'];

interface StepRecord {
  id: string;
  kind: string;
  seconds: number;
}

/** Wall seconds of a run, and per phase the wall time (a parallel phase's steps share it under Slurm). */
function runDemo(work: string, args: string[]): { wall: number; steps: StepRecord[]; out: string } {
  const t0 = performance.now();
  const r = spawnSync(process.execPath, [bin, 'run', 'lake/lake-chlorophyll.yaml', ...args], { cwd: work, encoding: 'utf8' });
  const wall = (performance.now() - t0) / 1000;
  if (r.status !== 0) throw new Error(`run failed: ${r.stderr}`);
  const out = args[args.indexOf('--out') + 1];
  const manifest = JSON.parse(readFileSync(join(work, out, 'run-record.json'), 'utf8')) as { steps: { id: string; kind: string }[]; timing: { steps: { id: string; seconds: number }[] } };
  const seconds = new Map(manifest.timing.steps.map((t) => [t.id, t.seconds]));
  return { wall, steps: manifest.steps.map((s) => ({ ...s, seconds: seconds.get(s.id) ?? NaN })), out: r.stdout };
}

/** Wall seconds of a phase under Slurm: the runner says when each phase's array is done, in phase order. */
function phaseWall(out: string, kind: string): number {
  const done = [...out.matchAll(/steps? done on Slurm in ([\d.]+) s/g)].map((m) => Number(m[1]));
  return done[PHASES.indexOf(kind)] ?? NaN;
}

function phaseSeconds(steps: StepRecord[], kind: string, shared: boolean): { n: number; seconds: number; stepSum: number } {
  const of = steps.filter((s) => s.kind === kind);
  const stepSum = of.reduce((a, s) => a + s.seconds, 0);
  // under Slurm every step of an array records the array's wall time
  return { n: of.length, seconds: shared ? Math.max(...of.map((s) => s.seconds)) : stepSum, stepSum };
}

async function main() {
  const coresPerNode = Number(process.argv[2] ?? 32);
  const work = mkdtempSync(join(tmpdir(), 'dendrolog-slurm-bench-'));
  try {
    cpSync(join(root, 'recipes', 'lake-chlorophyll'), join(work, 'lake'), { recursive: true, filter: (src) => !src.includes(join('lake-chlorophyll', 'out')) });
    const cores = availableParallelism();
    console.log(`machine: ${cores} cores; Slurm: ${spawnSync('sinfo', ['-V'], { encoding: 'utf8' }).stdout.trim()}, one node`);
    const local = runDemo(work, ['--no-cache', '--workers', String(cores), '--out', 'local']);
    const per = Number(process.argv[3] ?? 8);
    const cluster = runDemo(work, ['--cache', 'cache', '--executor', 'slurm', '--out', 'cluster']);
    const bundled = runDemo(work, ['--cache', 'cache-2', '--executor', 'slurm', '--slurm-steps-per-task', String(per), '--out', 'bundled']);
    console.log(
      `demo, whole run: local ${local.wall.toFixed(1)} s (--workers ${cores}); Slurm ${cluster.wall.toFixed(1)} s (a step per task), ${bundled.wall.toFixed(1)} s (--slurm-steps-per-task ${per})`,
    );
    let cvTaskSeconds = 0;
    let cvTasks = 0;
    for (const kind of PHASES) {
      const l = phaseSeconds(local.steps, kind, false);
      const c = phaseWall(cluster.out, kind);
      const b = phaseWall(bundled.out, kind);
      console.log(
        `phase ${kind}: ${l.n} steps; local ${l.stepSum.toFixed(1)} s of step time on ${cores} threads (about ${(l.stepSum / cores).toFixed(1)} s wall); Slurm array ${c.toFixed(1)} s wall (a step per task), ${b.toFixed(1)} s (${per} per task)`,
      );
      if (kind === 'cv_fold') {
        cvTaskSeconds = l.stepSum / l.n;
        cvTasks = l.n;
      }
    }

    // Slurm's cost per task: an array whose tasks start dendrolog and fail at once (no such batch
    // file), so what is measured is queueing, launching and node start-up, not work
    const cache = new Cache(join(work, 'overhead-cache'));
    const n = 20;
    const noop: TaskStep[] = Array.from({ length: n }, (_, i) => ({
      id: `noop ${i}`,
      kind: 'source',
      params: {},
      seed: 1,
      key: 'f'.repeat(63) + (i % 10),
      seedKey: '',
      locator: {},
      codec: 'json',
      inputs: [{ kind: 'source', key: '0'.repeat(64), codec: 'json' }],
    }));
    const t0 = performance.now();
    await new SlurmRunner(cache, slurmOptions({}), silentProgress()).run(noop).catch(() => undefined);
    const arrayWall = (performance.now() - t0) / 1000;
    const t1 = performance.now();
    spawnSync(process.execPath, [bin, 'task', join(work, 'none.json'), '0'], { encoding: 'utf8' });
    const start = (performance.now() - t1) / 1000;
    const perTask = (arrayWall * cores) / n;
    console.log(`overhead: an array of ${n} empty tasks took ${arrayWall.toFixed(1)} s on ${cores} cores: ${perTask.toFixed(2)} s of a core per task (of which starting node and dendrolog: ${start.toFixed(2)} s)`);

    // a worked estimate: 50 cells × 5 folds, a fold per task at the demo's measured cost per fold,
    // one core per task
    const tasks = 50 * 5;
    const task = cvTaskSeconds + perTask;
    for (const nodes of [1, 10, 50]) {
      const waves = Math.ceil(tasks / (nodes * coresPerNode));
      console.log(
        `estimate: 50 cells × 5 folds on ${nodes} node${nodes === 1 ? '' : 's'} of ${coresPerNode} cores: ${tasks} tasks in ${waves} wave${waves === 1 ? '' : 's'} × ${task.toFixed(1)} s ≈ ${(waves * task).toFixed(0)} s`,
      );
    }
    console.log(`(a fold of the demo's cross-validation measured at ${cvTaskSeconds.toFixed(2)} s of one core, mean of ${cvTasks}; a larger table costs proportionally more; queue waits at a busy site come on top)`);
    writeFileSync(join(work, 'done'), '');
  } finally {
    rmSync(work, { recursive: true, force: true });
  }
}

await main();
