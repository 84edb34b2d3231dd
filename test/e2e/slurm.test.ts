/**
 * The Slurm executor against a real single-node Slurm cluster (Debian's slurm-wlm; `.ci/slurm-up`
 * starts one, and CI sets DENDROLOG_TEST_SLURM=1). Through the built command, as a cluster user
 * would run it.
 */
import { spawn, spawnSync } from 'node:child_process';
import { cpSync, mkdirSync, mkdtempSync, readFileSync, rmSync, writeFileSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { join, resolve } from 'node:path';
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { messages } from '../../core/messages.js';
import { SMALL_RECIPE, smallData } from '../helpers.js';

const root = resolve(import.meta.dirname, '..', '..');
const bin = join(root, 'bin', 'dendrolog.js');
const enabled = process.env.DENDROLOG_TEST_SLURM === '1';
/** A shared cluster may queue these tasks behind others: each test gets five minutes. */
const SLOW = 300_000;

interface Outcome {
  code: number | null;
  out: string;
  err: string;
}

/**
 * Runs the built command; `onLine` sees each line of its output as it comes (to act on a job id),
 * with the child process to signal.
 */
function dendrolog(args: string[], cwd: string, onLine?: (line: string, child: ReturnType<typeof spawn>) => void): Promise<Outcome> {
  return new Promise((done) => {
    const child = spawn(process.execPath, [bin, ...args], { cwd, stdio: ['ignore', 'pipe', 'pipe'] });
    let out = '';
    let err = '';
    let partial = '';
    child.stdout.on('data', (d: Buffer) => {
      out += d.toString('utf8');
      partial += d.toString('utf8');
      const lines = partial.split('\n');
      partial = lines.pop()!;
      for (const l of lines) onLine?.(l, child);
    });
    child.stderr.on('data', (d: Buffer) => (err += d.toString('utf8')));
    child.on('close', (code) => done({ code, out, err }));
  });
}

/** [whole, steps, tasks (when several steps to a task), job id] of a submission line. */
const submitted = (line: string) => /submitted (\d+) steps?(?: in (\d+) tasks?)? as Slurm job array (\d+)/.exec(line);
const outputs = (manifest: string) => (JSON.parse(readFileSync(manifest, 'utf8')) as { steps: { id: string; output: string }[] }).steps.map((s) => [s.id, s.output]);

describe.runIf(enabled)('the Slurm executor on a real cluster', () => {
  let work: string;
  beforeAll(() => {
    work = mkdtempSync(join(tmpdir(), 'dendrolog-slurm-'));
  });
  afterAll(() => rmSync(work, { recursive: true, force: true }));

  it('gives the demo every step output hash of a local run', async () => {
    cpSync(join(root, 'recipes', 'lake-chlorophyll'), join(work, 'lake'), { recursive: true, filter: (src) => !src.includes(join('lake-chlorophyll', 'out')) });
    const local = await dendrolog(['run', 'lake/lake-chlorophyll.yaml', '--no-cache', '--out', 'local'], work);
    expect(local.code, local.err).toBe(0);
    // 150 folds of 30 cells (24 of the forest, 4 of the tree, one each of linear and mean): eight to a task keeps the scheduler's seconds per task from dominating;
    // the final forest's 200 trees grow as two tasks of 100
    const cluster = await dendrolog(['run', 'lake/lake-chlorophyll.yaml', '--cache', 'cache', '--executor', 'slurm', '--slurm-steps-per-task', '8', '--slurm-trees-per-task', '100', '--out', 'cluster'], work);
    expect(cluster.code, cluster.err).toBe(0);
    // cross-validation folds, final fits and explanations: three arrays
    const arrays = cluster.out.split('\n').map(submitted).filter((m) => m !== null);
    expect(arrays.map((m) => [m[1], m[2]])).toEqual([
      ['150', '19'],
      // the final fits and the prediction intervals' fold models (4 models × 5 folds): the forest's
      // two tasks of trees, and the other 22 steps eight to a task
      ['24', '5'],
      ['3', '1'],
    ]);
    expect(outputs(join(work, 'cluster', 'run-record.json'))).toEqual(outputs(join(work, 'local', 'run-record.json')));
  }, SLOW);

  it('names the job and task of a task cancelled with scancel; a rerun submits only the gap, a third run nothing', async () => {
    const dir = join(work, 'small');
    const recipe = SMALL_RECIPE.replace('mean: {kind: mean}', 'mean: {kind: mean}\n  tree: {kind: decision_tree, grid: {max_depth: [1, 2], min_leaf: [2, 4]}}');
    mkdirSync(join(dir, 'data'), { recursive: true });
    writeFileSync(join(dir, 'recipe.yaml'), recipe);
    writeFileSync(join(dir, 'data', 'obs.csv'), smallData());
    let job = '';
    // 6 cells × 3 folds, a cell's folds to a task, one task at a time: the last task is still
    // pending when cancelled
    const args = ['run', 'recipe.yaml', '--cache', 'cache', '--executor', 'slurm', '--slurm-max-running', '1', '--slurm-steps-per-task', '3'];
    const first = await dendrolog(args, dir, (line) => {
      const m = submitted(line);
      if (m && !job) {
        job = m[3];
        expect([m[1], m[2]]).toEqual(['18', '6']);
        spawnSync('scancel', [`${job}_5`]);
      }
    });
    expect(first.code).toBe(1);
    // a task cancelled before it started leaves no record: Slurm drops it from the pending range
    const [before] = messages.clusterTaskNoRecord('cv tree max_depth=2 min_leaf=4 fold 1', `${job}_5`, '\u0000').split('\u0000');
    expect(first.err.startsWith(before), first.err).toBe(true);
    const second = await dendrolog(args, dir);
    expect(second.code, second.err).toBe(0);
    // the cancelled cell's 3 folds, then 3 final fits beside 3 models × 3 interval folds, and 2 explanations
    expect(second.out.split('\n').map((l) => submitted(l)?.[1]).filter(Boolean)).toEqual(['3', '12', '2']);
    const third = await dendrolog(args, dir);
    expect(third.code).toBe(0);
    expect(third.out).not.toMatch(/submitted/);
  }, SLOW);

  it('cancels its job array when interrupted', async () => {
    const dir = join(work, 'small');
    let job = '';
    const r = await dendrolog(['run', 'recipe.yaml', '--cache', 'cache-2', '--executor', 'slurm', '--slurm-max-running', '1'], dir, (line, child) => {
      const m = submitted(line);
      if (m && !job) {
        job = m[3];
        child.kill('SIGINT');
      }
    });
    expect(r.code).toBe(1);
    expect(r.err).toContain(messages.clusterInterrupted(job));
    const states = spawnSync('scontrol', ['show', 'job', '-o', job], { encoding: 'utf8' }).stdout;
    expect(states).not.toMatch(/JobState=(PENDING|RUNNING)/);
    expect(states).toMatch(/JobState=CANCELLED/);
  }, SLOW);
});
