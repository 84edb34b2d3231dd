/** The Slurm executor's pieces that need no cluster: options, the sbatch command line, and reading what Slurm prints. */
import { describe, expect, it } from 'vitest';
import { messages } from '../../core/messages.js';
import { errorOf } from '../helpers.js';
import { readFileSync } from 'node:fs';
import { join } from 'node:path';
import { packageRoot } from '../../runner/paths.js';
import { ACTIVE_STATES, arraySpec, neverStarts, partsPerTask, RETRIED_STATES, sbatchArgs, shellWord, slurmOptions, submittedJob, TASK_WORK, taskGroups, taskRecords, type TaskStep } from '../../runner/slurm.js';

const none = { partition: null, time: null, mem: null, account: null, maxRunning: null, cpus: 1, stepsPerTask: 1, treesPerTask: null };

describe('Slurm options', () => {
  it('take the command line over the environment, and default to one core and nothing else', () => {
    expect(slurmOptions({}, {})).toEqual(none);
    const o = slurmOptions({ 'slurm-partition': 'short', 'slurm-cpus': '4' }, { DENDROLOG_SLURM_PARTITION: 'long', DENDROLOG_SLURM_MEM: '8G', DENDROLOG_SLURM_MAX_RUNNING: '10', DENDROLOG_SLURM_TREES_PER_TASK: '100' });
    expect(o).toEqual({ ...none, partition: 'short', mem: '8G', maxRunning: 10, cpus: 4, treesPerTask: 100 });
  });

  it('refuse a bad value, naming the option or variable it came from', async () => {
    const a = await errorOf(() => slurmOptions({ 'slurm-cpus': '0' }, {}));
    expect([a.message, a.exitCode]).toEqual([messages.usageOptionValue('--slurm-cpus', '0', 'a whole number from 1 to 100000'), 2]);
    const b = await errorOf(() => slurmOptions({}, { DENDROLOG_SLURM_TIME: '2 hours' }));
    expect(b.message).toBe(messages.usageEnvValue('DENDROLOG_SLURM_TIME', '2 hours', 'a Slurm value without spaces'));
  });
});

describe('dividing a step into tasks', () => {
  // a 500-tree forest in blocks of 50 on 300,000 rows: 15 million rows drawn per block
  const forest = { count: 10, unit: 'trees', perPart: 50, total: 500, work: 15e6 };

  it('gives a task enough blocks for TASK_WORK, or the trees asked for in whole blocks', () => {
    expect(partsPerTask(forest, { treesPerTask: null })).toBe(Math.ceil(TASK_WORK / 15e6));
    expect(partsPerTask(forest, { treesPerTask: 100 })).toBe(2);
    expect(partsPerTask(forest, { treesPerTask: 120 })).toBe(3);
    expect(partsPerTask(forest, { treesPerTask: 1 })).toBe(1);
    // a small fit is one task: its work is far below a task's
    expect(partsPerTask({ ...forest, work: 1000 }, { treesPerTask: null })).toBeGreaterThanOrEqual(forest.count);
  });

  it('groups whole steps stepsPerTask to a task, and gives each range of parts a task of its own', () => {
    const step = (id: string, part?: boolean) => ({ id, ...(part ? { part: { first: 0, end: 1, of: 'k' } } : {}) }) as TaskStep;
    const ids = (groups: TaskStep[][]) => groups.map((g) => g.map((s) => s.id));
    expect(ids(taskGroups([step('a'), step('b'), step('c')], 2))).toEqual([['a', 'b'], ['c']]);
    expect(ids(taskGroups([step('a'), step('p1', true), step('p2', true), step('b'), step('c')], 8))).toEqual([['a'], ['p1'], ['p2'], ['b', 'c']]);
  });
});

describe('the sbatch command line', () => {
  it('writes array indices as ranges', () => {
    expect(arraySpec([7, 0, 1, 2, 5, 8])).toBe('0-2,5,7-8');
    expect(arraySpec([3])).toBe('3');
  });

  it('asks for one array that sbatch waits on, one log per task, and passes the site options', () => {
    const args = sbatchArgs({ ...none, partition: 'short', time: '1:00:00', mem: '4G', account: 'lakes', maxRunning: 5, cpus: 2 }, { dir: '/c/tasks/b', name: 'dendrolog-fit', indices: [0, 1, 2], cwd: '/w' });
    expect(args).toEqual([
      '--parsable',
      '--array=0-2%5',
      '--job-name=dendrolog-fit',
      '--output=/c/tasks/b/task-%a.log',
      '--chdir=/w',
      '--cpus-per-task=2',
      '--ntasks=1',
      '--partition=short',
      '--time=1:00:00',
      '--mem=4G',
      '--account=lakes',
      '/c/tasks/b/task.sh',
    ]);
  });

  it('quotes paths for the job script so spaces and quotes stay one word', () => {
    expect(shellWord("/data/it's here")).toBe(`'/data/it'\\''s here'`);
  });
});

/** A recorded output of test/fixtures/slurm (Slurm 22.05, single node; the command is in its first line), without the comments. */
const recorded = (name: string) =>
  readFileSync(join(packageRoot(), 'test', 'fixtures', 'slurm', name), 'utf8')
    .split('\n')
    .filter((l) => !l.startsWith('#'))
    .join('\n');
const brief = (text: string) => taskRecords(text).map((t) => `${t.task} ${t.state} ${t.exitCode}`);

describe('what Slurm 22.05 printed (recorded)', () => {
  it('sbatch --parsable: the job id', () => {
    expect(submittedJob(recorded('sbatch-parsable.txt'))).toBe('45');
  });

  it('scontrol for an array with a failed task: one record per task, the array id carried by the last task', () => {
    expect(brief(recorded('scontrol-array-completed-and-failed.txt')).sort()).toEqual(['0 COMPLETED 0:0', '1 COMPLETED 0:0', '2 FAILED 1:0', '3 COMPLETED 0:0']);
  });

  it('scontrol for running and pending tasks: the pending range is one line, read as two tasks still active', () => {
    const tasks = taskRecords(recorded('scontrol-array-running-and-pending.txt'));
    expect(tasks.map((t) => `${t.task} ${t.state}`).sort()).toEqual(['0 RUNNING', '1 RUNNING', '2 PENDING', '3 PENDING']);
    expect(tasks.every((t) => ACTIVE_STATES.has(t.state))).toBe(true);
  });

  it('scontrol after scancel and after a time limit: ended states, not active, not retried', () => {
    const cancelled = taskRecords(recorded('scontrol-array-cancelled.txt'));
    expect(cancelled.map((t) => t.state)).toEqual(['CANCELLED', 'CANCELLED', 'CANCELLED', 'CANCELLED']);
    const timeout = taskRecords(recorded('scontrol-array-timeout.txt'));
    expect(brief(recorded('scontrol-array-timeout.txt')).sort()).toEqual(['0 COMPLETED 0:0', '1 TIMEOUT 0:15']);
    for (const t of [...cancelled, ...timeout]) {
      expect(ACTIVE_STATES.has(t.state)).toBe(false);
      expect(RETRIED_STATES.has(t.state)).toBe(false);
    }
  });
});

describe('tasks that will never start', () => {
  it('are told by their pending reason: partition, account and QOS limits, not a busy cluster', () => {
    const t = (reason: string, state = 'PENDING') => ({ task: 0, state, exitCode: '0:0', reason });
    for (const r of ['PartitionConfig', 'PartitionTimeLimit', 'QOSMaxWallDurationPerJobLimit', 'AssocMaxCpuPerJobLimit', 'InvalidAccount']) expect(neverStarts(t(r))).toBe(true);
    // waiting for resources, priority or a throttle clears by itself
    for (const r of ['Resources', 'Priority', 'JobArrayTaskLimit', 'None']) expect(neverStarts(t(r))).toBe(false);
    expect(neverStarts(t('PartitionConfig', 'RUNNING'))).toBe(false);
  });

  it('recorded: an array asking more cores per task than the node has waits with PartitionConfig', () => {
    const tasks = taskRecords(recorded('scontrol-array-partition-config.txt'));
    expect(tasks).toHaveLength(4);
    expect(tasks.every(neverStarts)).toBe(true);
  });
});

describe('what Slurm prints', () => {
  it('reads the job id sbatch --parsable prints, with or without a cluster name', () => {
    expect(submittedJob('4242\n')).toBe('4242');
    expect(submittedJob('4242;north\n')).toBe('4242');
    expect(submittedJob('sbatch: error: invalid partition\n')).toBeNull();
  });

  it('reads array task records, one per task, expanding a pending range', () => {
    const text = [
      'JobId=12 ArrayJobId=11 ArrayTaskId=1 JobName=x JobState=FAILED Reason=NonZeroExitCode Dependency=(null) ExitCode=1:0',
      'JobId=11 ArrayJobId=11 ArrayTaskId=3-4%2 JobName=x JobState=PENDING Reason=JobArrayTaskLimit ExitCode=0:0',
    ].join('\n');
    expect(taskRecords(text)).toEqual([
      { task: 1, state: 'FAILED', exitCode: '1:0', reason: 'NonZeroExitCode' },
      { task: 3, state: 'PENDING', exitCode: '0:0', reason: 'JobArrayTaskLimit' },
      { task: 4, state: 'PENDING', exitCode: '0:0', reason: 'JobArrayTaskLimit' },
    ]);
  });
});
