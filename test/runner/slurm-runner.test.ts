/**
 * The Slurm executor against stand-ins for sbatch, scontrol and scancel (test/fixtures/fake-slurm)
 * that run each array task's script on this machine: what it submits, what it retries, how it
 * reports a failed task. The real scheduler is exercised in test/e2e/slurm.test.ts.
 */
import { mkdtempSync, readFileSync, readdirSync, rmSync, symlinkSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import { afterEach, beforeEach, describe, expect, it } from 'vitest';
import { messages } from '../../core/messages.js';
import { packageRoot } from '../../runner/paths.js';
import { Cache } from '../../runner/cache.js';
import { partKey } from '../../runner/parts.js';
import { SMALL_RECIPE } from '../helpers.js';
import { cli, expectOutcome, scenario } from '../hostile/harness.js';

const FAKES = join(packageRoot(), 'test', 'fixtures', 'fake-slurm');
let state: string;
const saved = { PATH: process.env.PATH, plan: process.env.FAKE_SLURM_PLAN, dir: process.env.FAKE_SLURM_DIR };

beforeEach(() => {
  state = mkdtempSync(join(tmpdir(), 'fake-slurm-'));
  process.env.PATH = `${FAKES}:${saved.PATH}`;
  process.env.FAKE_SLURM_DIR = state;
  delete process.env.FAKE_SLURM_PLAN;
});

afterEach(() => {
  rmSync(state, { recursive: true, force: true });
  process.env.PATH = saved.PATH;
  if (saved.plan === undefined) delete process.env.FAKE_SLURM_PLAN;
  if (saved.dir === undefined) delete process.env.FAKE_SLURM_DIR;
});

const calls = (): string[][] => readFileSync(join(state, 'calls'), 'utf8').trimEnd().split('\n').map((l) => JSON.parse(l) as string[]);
const arrayOf = (args: string[]) => args.find((a) => a.startsWith('--array='));

describe('the Slurm executor (stand-in commands)', () => {
  it('submits each phase of independent steps as one array, gives the local outputs, and submits nothing when all is cached', async () => {
    const s = scenario();
    const local = await cli(['run', s.recipe, '--no-cache', '--workers', '1', '--out', join(s.dir, 'local')]);
    expect(local.code).toBe(0);
    await expectOutcome(s.dir, ['run', s.recipe, '--cache', s.cache, '--executor', 'slurm', '--slurm-partition', 'short', '--out', join(s.dir, 'cluster')], { code: 0, changes: ['cluster/'] });
    // SMALL_RECIPE: 2 models × 3 folds; 2 final fits beside 2 models × 3 interval folds; 1 explanation (mean has none)
    expect(calls().map(arrayOf)).toEqual(['--array=0-5', '--array=0-7', '--array=0']);
    expect(calls()[0]).toContain('--partition=short');
    const steps = (dir: string) => (JSON.parse(readFileSync(join(s.dir, dir, 'run-record.json'), 'utf8')) as { steps: { id: string; output: string }[] }).steps;
    expect(steps('cluster')).toEqual(steps('local').map((x) => expect.objectContaining({ id: x.id, output: x.output })));
    // each step records its own time from its task, not the whole array's
    const timing = (JSON.parse(readFileSync(join(s.dir, 'cluster', 'run-record.json'), 'utf8')) as { timing: { steps: { id: string; seconds: number }[] } }).timing.steps;
    expect(new Set(timing.filter((t) => t.id.includes(' fold ')).map((t) => t.seconds)).size).toBeGreaterThan(1);
    // batch folders of arrays that succeeded are removed
    expect(readdirSync(join(s.cache, 'tasks'))).toEqual([]);
    const again = await cli(['run', s.recipe, '--cache', s.cache, '--executor', 'slurm', '--out', join(s.dir, 'cluster')]);
    expect(again.code).toBe(0);
    expect(calls()).toHaveLength(3);
  });

  it('runs several steps to a task when asked, with the same outputs', async () => {
    const s = scenario();
    const r = await expectOutcome(s.dir, ['run', s.recipe, '--cache', s.cache, '--executor', 'slurm', '--slurm-steps-per-task', '4', '--out', join(s.dir, 'a')], { code: 0, changes: ['a/'] });
    expect(calls().map(arrayOf)).toEqual(['--array=0-1', '--array=0-1', '--array=0']);
    expect(r.out).toContain('submitted 6 steps in 2 tasks as Slurm job array 101');
    const local = await cli(['run', s.recipe, '--no-cache', '--workers', '1', '--out', join(s.dir, 'b')]);
    expect(local.code).toBe(0);
    const steps = (dir: string) => readFileSync(join(s.dir, dir, 'run-record.json'), 'utf8').match(/"output": "[0-9a-f]{64}"/g);
    expect(steps('a')).toEqual(steps('b'));
  });

  it('grows a final forest as tasks of its trees, merged into the bytes of a local run; a rerun submits only the trees not yet grown', async () => {
    // (without prediction intervals, so the fits' array holds the fits alone)
    const recipe = SMALL_RECIPE.replace('mean: {kind: mean}', 'mean: {kind: mean}\n  forest: {kind: random_forest, grid: {trees: 120, min_leaf: 2}}').replace(
      'evaluation:',
      'evaluation:\n  prediction_interval: false',
    );
    const s = scenario({ 'recipe.yaml': recipe });
    const local = await cli(['run', s.recipe, '--no-cache', '--workers', '1', '--out', join(s.dir, 'local')]);
    expect(local.code).toBe(0);
    // the fits' array: linear and mean in one task, then the forest's 120 trees as 50, 50 and 20 in
    // a task each; the last is cancelled
    process.env.FAKE_SLURM_PLAN = JSON.stringify({ lose: { '2:3': 'CANCELLED' } });
    const args = ['run', s.recipe, '--cache', s.cache, '--executor', 'slurm', '--slurm-trees-per-task', '50', '--slurm-steps-per-task', '3', '--out', join(s.dir, 'cluster')];
    const first = await cli(args);
    expect(first.code).toBe(1);
    expect(first.err).toMatch(/^step fit forest \(trees 101-120\) failed as Slurm task 102_3 \(CANCELLED, /);
    expect(first.out).toContain('submitted 3 steps in 4 tasks as Slurm job array 102');
    delete process.env.FAKE_SLURM_PLAN;
    const second = await cli(args);
    expect(second.code, second.err).toBe(0);
    // the rerun grows only the cancelled trees, then explains
    expect(calls().map(arrayOf)).toEqual(['--array=0-2', '--array=0-3', '--array=0', '--array=0']);
    expect(second.out).toContain('submitted 1 step as Slurm job array 103');
    const manifest = (dir: string) => JSON.parse(readFileSync(join(s.dir, dir, 'run-record.json'), 'utf8')) as { steps: { id: string; key: string; output: string }[] };
    const outputs = (dir: string) => manifest(dir).steps.map((x) => [x.id, x.output]);
    expect(outputs('cluster')).toEqual(outputs('local'));
    // the parts are gone from the cache once merged; the forest's output is there
    const fit = manifest('cluster').steps.find((x) => x.id === 'fit forest')!;
    const cache = new Cache(s.cache);
    expect([0, 1, 2].map((b) => cache.get({ kind: 'fit', key: partKey(fit.key, b, b + 1), codec: 'bytes' }).status)).toEqual(['miss', 'miss', 'miss']);
    expect(cache.get({ kind: 'fit', key: fit.key, codec: 'record' }).status).toBe('hit');
  });

  it('submits a task lost with its node once more, and only that task', async () => {
    process.env.FAKE_SLURM_PLAN = JSON.stringify({ lose: { '1': 'NODE_FAIL' } });
    const s = scenario();
    const r = await expectOutcome(s.dir, ['run', s.recipe, '--cache', s.cache, '--executor', 'slurm'], { code: 0, changes: ['out/small/'] });
    expect(calls().map(arrayOf).slice(0, 2)).toEqual(['--array=0-5', '--array=1']);
    expect(r.out).toContain('1 Slurm task of job 101 lost with a node (NODE_FAIL): submitting once more');
  });

  it('reports a step that failed in its task with the step’s own message, the job and task id, the state and the log', async () => {
    const text = SMALL_RECIPE.replace('mean: {kind: mean}', 'tree: {kind: decision_tree, grid: {min_leaf: 200}}');
    const s = scenario({ 'recipe.yaml': text });
    const r = await expectOutcome(s.dir, ['run', s.recipe, '--cache', s.cache, '--executor', 'slurm'], { code: 1 });
    const batch = readdirSync(join(s.cache, 'tasks'))[0];
    // linear's 3 folds are tasks 0 to 2, the tree's 3 to 5
    expect(r.err).toMatch(/^step cv tree one setting fold 1 failed as Slurm task 101_3 \(FAILED, exit code 1:0\): model "tree" could not be fitted/);
    expect(r.err).toContain(`its log is ${join(s.cache, 'tasks', batch, 'task-3.log')}`);
    // the batch folder with the failed task's log is kept; the linear model's outputs are in the cache
    expect(readFileSync(join(s.cache, 'tasks', batch, 'task-3.log'), 'utf8')).toContain('min_leaf');
    // the job script starts this dendrolog by absolute paths, for the task number Slurm gives it
    const script = readFileSync(join(s.cache, 'tasks', batch, 'task.sh'), 'utf8').split('\n');
    expect(script[0]).toBe('#!/bin/sh');
    expect(script[2]).toBe(`exec '${process.execPath}' '${join(packageRoot(), 'bin', 'dendrolog.js')}' task '${join(s.cache, 'tasks', batch, 'batch.json')}' "$SLURM_ARRAY_TASK_ID"`);
    const described = JSON.parse(readFileSync(join(s.cache, 'tasks', batch, 'batch.json'), 'utf8')) as { cache: string; tasks: { id: string }[][] };
    expect([described.cache, described.tasks.length, described.tasks[3].map((t) => t.id)]).toEqual([s.cache, 6, ['cv tree one setting fold 1']]);
    const rerun = await cli(['run', s.recipe, '--cache', s.cache, '--executor', 'slurm']);
    expect(rerun.code).toBe(1);
    // the rerun submits only the steps that have no output: the tree's three folds
    expect(calls().map(arrayOf)).toEqual(['--array=0-5', '--array=0-2']);
    expect(rerun.err).toMatch(/^step cv tree one setting fold 1 failed as Slurm task 102_0 /);
  });

  it('says a task cancelled by someone was not a failure of the step, and to run again', async () => {
    process.env.FAKE_SLURM_PLAN = JSON.stringify({ lose: { '4': 'CANCELLED' } });
    const s = scenario();
    const r = await expectOutcome(s.dir, ['run', s.recipe, '--cache', s.cache, '--executor', 'slurm'], { code: 1 });
    const batch = readdirSync(join(s.cache, 'tasks'))[0];
    expect(r.err.trim()).toBe(
      messages.clusterTaskFailed('cv mean no hyperparameters fold 2', '101_4', 'CANCELLED', '0:0', join(s.cache, 'tasks', batch, 'task-4.log'), messages.clusterStateMeaning('CANCELLED')),
    );
    expect(r.out).toContain('Slurm task 101_4 ended CANCELLED; waiting for the other tasks, so their outputs are kept');
  });

  it('says what sbatch refused, and that the slurm commands are missing when they are', async () => {
    process.env.FAKE_SLURM_PLAN = JSON.stringify({ refuse: 'sbatch: error: invalid partition specified: nowhere' });
    const s = scenario();
    await expectOutcome(s.dir, ['run', s.recipe, '--cache', s.cache, '--executor', 'slurm', '--slurm-partition', 'nowhere'], {
      code: 2,
      err: messages.clusterSubmitFailed('sbatch: error: invalid partition specified: nowhere'),
    });
    process.env.FAKE_SLURM_PLAN = JSON.stringify({ refuse: 'sbatch: error: Batch job submission failed: Unable to contact slurm controller (connect failure)' });
    await expectOutcome(s.dir, ['run', s.recipe, '--cache', s.cache, '--executor', 'slurm'], {
      code: 1,
      err: messages.clusterUnreachable('sbatch: error: Batch job submission failed: Unable to contact slurm controller (connect failure)'),
    });
    // sbatch there but no scontrol: the end of the job cannot be told, so it is cancelled, not waited on
    delete process.env.FAKE_SLURM_PLAN;
    const onlySbatch = mkdtempSync(join(tmpdir(), 'only-sbatch-'));
    symlinkSync(join(FAKES, 'sbatch'), join(onlySbatch, 'sbatch'));
    symlinkSync(join(FAKES, 'scancel'), join(onlySbatch, 'scancel'));
    symlinkSync(process.execPath, join(onlySbatch, 'node'));
    process.env.PATH = onlySbatch;
    await expectOutcome(s.dir, ['run', s.recipe, '--cache', s.cache, '--executor', 'slurm'], { code: 2, err: messages.clusterCommandMissing('scontrol', 'ENOENT') });
    expect(readFileSync(join(state, 'cancelled'), 'utf8')).toContain('101');
    process.env.PATH = '/nonexistent';
    await expectOutcome(s.dir, ['run', s.recipe, '--cache', s.cache, '--executor', 'slurm'], { code: 2, err: messages.clusterCommandMissing('sbatch', 'ENOENT') });
    rmSync(onlySbatch, { recursive: true, force: true });
  });

  it('cancels and says so when Slurm will never start the tasks as asked, instead of waiting forever', async () => {
    process.env.FAKE_SLURM_PLAN = JSON.stringify({ pendForever: 'PartitionConfig' });
    const s = scenario();
    await expectOutcome(s.dir, ['run', s.recipe, '--cache', s.cache, '--executor', 'slurm', '--slurm-cpus', '64'], { code: 2, err: messages.clusterNeverStarts('101', 'PartitionConfig') });
    expect(readFileSync(join(state, 'cancelled'), 'utf8')).toBe('101\n');
  });

  it('refuses --no-cache and Slurm options without --executor slurm', async () => {
    const s = scenario();
    await expectOutcome(s.dir, ['run', s.recipe, '--no-cache', '--executor', 'slurm'], { code: 2, err: messages.clusterNeedsCache() });
    await expectOutcome(s.dir, ['run', s.recipe, '--slurm-mem', '4G'], { code: 2, err: messages.usageOptionValue('--slurm-mem', '4G', 'to be given with --executor slurm') });
    await expectOutcome(s.dir, ['run', s.recipe, '--executor', 'cloud'], { code: 2, err: messages.usageOptionValue('--executor', 'cloud', '"local" or "slurm"') });
  });
});
