import { spawnSync } from 'node:child_process';
import { randomBytes } from 'node:crypto';
import { existsSync, mkdirSync, readdirSync, readFileSync, rmSync, writeFileSync } from 'node:fs';
import { join } from 'node:path';
import type { Cache } from './cache.js';
import { DendrologError, messages } from '../core/messages.js';
import { parseJson } from '../core/dict.js';
import type { OutputCodec, PartDivision, StepInstance } from '../core/step-types.js';
import { packageRoot, displayOf } from './paths.js';
import type { Progress } from './progress.js';

/** What a site may set once for every run, by environment variable, and each run by option. */
export interface SlurmOptions {
  partition: string | null;
  /** Time limit per task, in Slurm's words (`30`, `2:00:00`, `1-00:00:00`). */
  time: string | null;
  /** Memory per task, in Slurm's words (`4G`). */
  mem: string | null;
  account: string | null;
  /** Most tasks of one array running at once (Slurm's `%N`); null for the scheduler to decide. */
  maxRunning: number | null;
  /** Cores per task: a forest fitted in a task grows its trees on this many threads. */
  cpus: number;
  /** Steps each array task runs in turn: more than 1 when steps are short beside Slurm's cost per task. */
  stepsPerTask: number;
  /**
   * Trees of a final forest grown per task (rounded up to whole blocks of the engine's); null to size
   * tasks by their work (TASK_WORK).
   */
  treesPerTask: number | null;
}

/** Each option's command-line name and the environment variable a site may set instead. */
export const SLURM_SETTINGS: { key: keyof SlurmOptions; option: string; env: string }[] = [
  { key: 'partition', option: 'slurm-partition', env: 'DENDROLOG_SLURM_PARTITION' },
  { key: 'time', option: 'slurm-time', env: 'DENDROLOG_SLURM_TIME' },
  { key: 'mem', option: 'slurm-mem', env: 'DENDROLOG_SLURM_MEM' },
  { key: 'account', option: 'slurm-account', env: 'DENDROLOG_SLURM_ACCOUNT' },
  { key: 'maxRunning', option: 'slurm-max-running', env: 'DENDROLOG_SLURM_MAX_RUNNING' },
  { key: 'cpus', option: 'slurm-cpus', env: 'DENDROLOG_SLURM_CPUS' },
  { key: 'stepsPerTask', option: 'slurm-steps-per-task', env: 'DENDROLOG_SLURM_STEPS_PER_TASK' },
  { key: 'treesPerTask', option: 'slurm-trees-per-task', env: 'DENDROLOG_SLURM_TREES_PER_TASK' },
];

/**
 * The work of one task when a step divides into parts and no size is asked for: 60 million rows
 * drawn into trees, about half a minute for one core (the engine grows a tree at roughly half a
 * microsecond per row drawn), so that Slurm's few seconds of start-up per task stay a small share.
 */
export const TASK_WORK = 60_000_000;

/**
 * How many parts of a divided step go to one task: the asked number of trees per task in whole
 * parts, or else enough parts for TASK_WORK.
 *
 * Example: `partsPerTask({count: 10, unit: 'trees', perPart: 50, total: 500, work: 15e6}, {treesPerTask: null, …})` is 4.
 */
export function partsPerTask(d: PartDivision, o: Pick<SlurmOptions, 'treesPerTask'>): number {
  if (d.unit === 'trees' && o.treesPerTask !== null) return Math.ceil(o.treesPerTask / d.perPart);
  return Math.max(1, Math.ceil(TASK_WORK / Math.max(1, d.work)));
}

/**
 * The Slurm options from command-line values (by option name) over environment variables, checked;
 * a bad value is refused naming the option or variable it came from.
 *
 * Example: `slurmOptions({'slurm-partition': 'short'}, {DENDROLOG_SLURM_CPUS: '4'})` is `{partition: 'short', cpus: 4, …}`.
 */
export function slurmOptions(given: Record<string, string | boolean | undefined>, env: NodeJS.ProcessEnv = process.env): SlurmOptions {
  const out: SlurmOptions = { partition: null, time: null, mem: null, account: null, maxRunning: null, cpus: 1, stepsPerTask: 1, treesPerTask: null };
  for (const { key, option, env: name } of SLURM_SETTINGS) {
    const fromOption = typeof given[option] === 'string' ? (given[option] as string) : undefined;
    const raw = fromOption ?? env[name];
    if (raw === undefined || raw === '') continue;
    const source = fromOption !== undefined ? `--${option}` : name;
    if (key === 'maxRunning' || key === 'cpus' || key === 'stepsPerTask' || key === 'treesPerTask') {
      const n = Number(raw);
      if (!Number.isInteger(n) || n < 1 || n > 100000) throw new DendrologError(refused(source, raw, 'a whole number from 1 to 100000'), 2);
      out[key] = n;
    } else {
      // passed to sbatch as one argument: no spaces or control characters that would read as more
      // eslint-disable-next-line no-control-regex -- finding control characters is the point
      if (!/^[^\s\u0000-\u001f]{1,200}$/.test(raw)) throw new DendrologError(refused(source, raw, 'a Slurm value without spaces'), 2);
      out[key] = raw;
    }
  }
  return out;
}

/** A bad value, in the words of where it came from: an option or an environment variable. */
function refused(source: string, value: string, expected: string): string {
  return source.startsWith('--') ? messages.usageOptionValue(source, value, expected) : messages.usageEnvValue(source, value, expected);
}

/**
 * A list of array indices in Slurm's `--array` form.
 *
 * Example: `arraySpec([0, 1, 2, 5, 7, 8])` is `"0-2,5,7-8"`.
 */
export function arraySpec(indices: number[]): string {
  const sorted = [...indices].sort((a, b) => a - b);
  const parts: string[] = [];
  for (let i = 0; i < sorted.length; ) {
    let j = i;
    while (j + 1 < sorted.length && sorted[j + 1] === sorted[j] + 1) j++;
    parts.push(j === i ? String(sorted[i]) : `${sorted[i]}-${sorted[j]}`);
    i = j + 1;
  }
  return parts.join(',');
}

/** The arguments of `sbatch` for one job array of a batch folder's tasks. */
export function sbatchArgs(o: SlurmOptions, batch: { dir: string; name: string; indices: number[]; cwd: string }): string[] {
  const args = [
    '--parsable',
    `--array=${arraySpec(batch.indices)}${o.maxRunning ? `%${o.maxRunning}` : ''}`,
    `--job-name=${batch.name}`,
    `--output=${join(batch.dir, 'task-%a.log')}`,
    `--chdir=${batch.cwd}`,
    `--cpus-per-task=${o.cpus}`,
    '--ntasks=1',
  ];
  if (o.partition) args.push(`--partition=${o.partition}`);
  if (o.time) args.push(`--time=${o.time}`);
  if (o.mem) args.push(`--mem=${o.mem}`);
  if (o.account) args.push(`--account=${o.account}`);
  args.push(join(batch.dir, 'task.sh'));
  return args;
}

/**
 * The job id `sbatch --parsable` printed: its first line, before any `;cluster`.
 *
 * Example: `submittedJob('4242;north\n')` is `"4242"`.
 */
export function submittedJob(stdout: string): string | null {
  const m = /^\s*(\d+)(?:;\S*)?\s*$/m.exec(stdout);
  return m ? m[1] : null;
}

/** One array task as `scontrol show job -o` describes it. */
export interface TaskRecord {
  task: number;
  state: string;
  exitCode: string;
  reason: string;
}

/**
 * The array tasks of `scontrol show job -o JOB` output, one record per line; a line that stands for
 * several pending tasks (`ArrayTaskId=3-5%2`) is one record per task.
 *
 * Example: a line `JobId=12 ArrayJobId=11 ArrayTaskId=1 JobState=FAILED Reason=NonZeroExitCode … ExitCode=1:0` gives `{task: 1, state: 'FAILED', exitCode: '1:0', reason: 'NonZeroExitCode'}`.
 */
export function taskRecords(text: string): TaskRecord[] {
  const out: TaskRecord[] = [];
  for (const line of text.split('\n')) {
    const field = (name: string) => new RegExp(`(?:^|\\s)${name}=(\\S*)`).exec(line)?.[1];
    const ids = field('ArrayTaskId');
    const state = field('JobState');
    if (ids === undefined || state === undefined) continue;
    for (const task of expandTaskIds(ids)) out.push({ task, state, exitCode: field('ExitCode') ?? '?', reason: field('Reason') ?? '' });
  }
  return out;
}

function expandTaskIds(spec: string): number[] {
  const out: number[] = [];
  for (const part of spec.replace(/%\d+$/, '').split(',')) {
    const m = /^(\d+)(?:-(\d+))?(?::(\d+))?$/.exec(part);
    if (!m) continue;
    const from = Number(m[1]);
    const to = m[2] === undefined ? from : Number(m[2]);
    const step = m[3] === undefined ? 1 : Number(m[3]);
    for (let t = from; t <= to; t += step) out.push(t);
  }
  return out;
}

/** Task states of a job that has not ended: waiting, running, or on its way back to the queue. */
export const ACTIVE_STATES = new Set([
  'PENDING',
  'CONFIGURING',
  'RUNNING',
  'COMPLETING',
  'SUSPENDED',
  'STOPPED',
  'REQUEUED',
  'REQUEUE_FED',
  'REQUEUE_HOLD',
  'RESIZING',
  'SIGNALING',
  'STAGE_OUT',
  'RESV_DEL_HOLD',
]);

/**
 * Reasons a pending task gives when Slurm will never start it as submitted: the partition, the
 * account or the quality of service cannot grant what a task asks. Waiting on them would be forever.
 */
export const NEVER_STARTS = new Set([
  'PartitionConfig',
  'PartitionNodeLimit',
  'PartitionTimeLimit',
  'AccountNotAllowed',
  'QOSNotAllowed',
  'InvalidAccount',
  'InvalidQOS',
  'BadConstraints',
  'DependencyNeverSatisfied',
]);

/** Whether a pending task's reason means it will never start (also the per-job limits of a QOS or an association). */
export function neverStarts(t: TaskRecord): boolean {
  return t.state === 'PENDING' && (NEVER_STARTS.has(t.reason) || /^(QOS|Assoc)Max\w*PerJob(Limit)?$/.test(t.reason));
}

/** Task states where the node, not the step, failed: such a task is submitted once more. */
export const RETRIED_STATES = new Set(['NODE_FAIL', 'PREEMPTED', 'BOOT_FAIL']);

/**
 * One step as a cluster task needs it: the instance, the codec of its output, and its inputs named
 * by cache key. With `part`, only that range of the step's parts (StepParts.run), stored under the
 * part's own key in the `bytes` codec for the main process to merge.
 */
export type TaskStep = Omit<StepInstance, 'inputs'> & {
  codec: OutputCodec;
  inputs: { kind: string; key: string; codec: OutputCodec }[];
  part?: { first: number; end: number; of: string };
};

/** The file a job array's tasks read: the cache they share, and the steps of each array index, run in turn. */
export interface TaskBatch {
  cache: string;
  tasks: TaskStep[][];
}

/**
 * Steps into array tasks: `stepsPerTask` consecutive whole steps to a task, and each range of a
 * divided step's parts a task of its own (it is already sized to a task's work).
 *
 * Example: `taskGroups([a, b, c], 2)` is `[[a, b], [c]]`.
 */
export function taskGroups(steps: TaskStep[], stepsPerTask: number): TaskStep[][] {
  const groups: TaskStep[][] = [];
  let open: TaskStep[] | null = null;
  for (const s of steps) {
    if (s.part) {
      groups.push([s]);
      open = null;
    } else if (open && open.length < stepsPerTask) open.push(s);
    else groups.push((open = [s]));
  }
  return groups;
}

/** What a failed task leaves beside its log, so the main process can repeat the step's own words. */
export interface TaskFailure {
  /** The step that failed (a task may run several). */
  step: string;
  message: string;
  exitCode: 1 | 2 | null;
}

/** The Slurm commands, replaceable for tests. */
export interface SlurmCommands {
  sbatch: string;
  scontrol: string;
  scancel: string;
}

/** A runner that hands steps elsewhere: each writes its output into the cache. */
export interface RemoteRunner {
  /** Runs the steps; returns the seconds each took where its task said, by step key. */
  run(steps: TaskStep[]): Promise<Map<string, number>>;
  /** How many parts of a divided step one task takes (see partsPerTask). */
  partsPerTask(d: PartDivision): number;
}

/**
 * Runs batches of independent steps as Slurm job arrays over a shared cache. Each batch gets a
 * folder in the cache (`tasks/<id>/`: the step descriptions, the job script, one log per task).
 * Steps whose output is then missing are reported with their job and task id, state and log, except
 * tasks lost with their node (or preempted), which are submitted once more. A batch folder is
 * removed when every step of it succeeded, and kept, logs and all, when one failed. SIGINT or
 * SIGTERM while waiting cancels the array; an array Slurm will never start is cancelled and said.
 *
 * Example: `await new SlurmRunner(cache, slurmOptions({}), progress).run(tasks)` returns each step's seconds by key.
 */
export class SlurmRunner implements RemoteRunner {
  constructor(
    private readonly cache: Cache,
    private readonly options: SlurmOptions,
    private readonly progress: Progress,
    private readonly commands: SlurmCommands = { sbatch: 'sbatch', scontrol: 'scontrol', scancel: 'scancel' },
  ) {}

  partsPerTask(d: PartDivision): number {
    return partsPerTask(d, this.options);
  }

  async run(steps: TaskStep[]): Promise<Map<string, number>> {
    const started = performance.now();
    const id = `${new Date().toISOString().replace(/[-:]/g, '').slice(0, 15)}-${randomBytes(4).toString('hex')}`;
    const dir = join(this.cache.dir, 'tasks', id);
    mkdirSync(dir, { recursive: true });
    const groups = taskGroups(steps, this.options.stepsPerTask);
    writeFileSync(join(dir, 'batch.json'), JSON.stringify({ cache: this.cache.dir, tasks: groups } satisfies TaskBatch));
    const bin = join(packageRoot(), 'bin', 'dendrolog.js');
    writeFileSync(
      join(dir, 'task.sh'),
      `#!/bin/sh\n# a dendrolog job array task: runs task number $SLURM_ARRAY_TASK_ID of batch.json (its steps in turn)\nexec ${shellWord(process.execPath)} ${shellWord(bin)} task ${shellWord(join(dir, 'batch.json'))} "$SLURM_ARRAY_TASK_ID"\n`,
      { mode: 0o755 },
    );
    let pending = groups.map((_, t) => t);
    const retried = new Set<number>();
    for (;;) {
      // the parts of a divided step count as one step
      const stepCount = new Set(pending.flatMap((t) => groups[t].map((s) => s.part?.of ?? s.key))).size;
      const job = await this.submit(dir, pending, `dendrolog-${steps[0].kind}`, stepCount);
      const missing = pending.flatMap((t) => groups[t].filter((s) => this.cache.get(s).status !== 'hit').map((s) => ({ t, s })));
      if (missing.length === 0) break;
      const records = new Map((this.records(job) ?? []).map((r) => [r.task, r]));
      const failedTasks = [...new Set(missing.map((m) => m.t))];
      const again = failedTasks.filter((t) => RETRIED_STATES.has(records.get(t)?.state ?? '') && !retried.has(t));
      if (again.length === failedTasks.length) {
        again.forEach((t) => retried.add(t));
        this.progress.note(`${again.length} Slurm task${again.length === 1 ? '' : 's'} of job ${job} lost with a node (${again.map((t) => records.get(t)!.state).join(', ')}): submitting once more`);
        pending = again;
        continue;
      }
      const { t, s } = missing.find((m) => !again.includes(m.t)) ?? missing[0];
      const r = records.get(t);
      const log = displayOf(join(dir, `task-${t}.log`));
      const failure = readFailure(join(dir, `task-${t}.error.json`));
      // with several steps to a task, the step that failed is the one its failure names
      const step = failure?.step ?? s.id;
      if (!r && !failure) throw new DendrologError(messages.clusterTaskNoRecord(step, `${job}_${t}`, log), 1);
      if (r?.state === 'COMPLETED' && !failure) throw new DendrologError(messages.clusterTaskNoOutput(step, `${job}_${t}`, log), 1);
      throw new DendrologError(
        messages.clusterTaskFailed(step, `${job}_${t}`, r?.state ?? 'state unknown', r?.exitCode ?? '?', log, failure?.message ?? messages.clusterStateMeaning(r?.state ?? '')),
        failure?.exitCode ?? 1,
      );
    }
    const seconds = readSeconds(dir);
    rmSync(dir, { recursive: true, force: true });
    const done = new Set(steps.map((s) => s.part?.of ?? s.key)).size;
    this.progress.note(`${done} step${done === 1 ? '' : 's'} done on Slurm in ${((performance.now() - started) / 1000).toFixed(1)} s`);
    return seconds;
  }

  /**
   * Submits one array and waits for its end; returns the job id. The wait asks `scontrol` at growing
   * intervals (0.5 s, doubling to 5 s), which notices the end far sooner than `sbatch --wait`, whose
   * own intervals grow to 32 s; SIGINT or SIGTERM meanwhile cancels the array.
   */
  private async submit(dir: string, indices: number[], name: string, stepCount: number): Promise<string> {
    const args = sbatchArgs(this.options, { dir, name, indices, cwd: process.cwd() });
    let job: string | null = null;
    let interrupted = false;
    let wake: (() => void) | null = null;
    const told = new Set<number>();
    // listening before submitting: a signal that comes while sbatch runs must still cancel the job
    const cancel = () => {
      interrupted = true;
      if (job) spawnSync(this.commands.scancel, [job], { stdio: 'ignore' });
      wake?.();
    };
    process.on('SIGINT', cancel);
    process.on('SIGTERM', cancel);
    try {
      const r = spawnSync(this.commands.sbatch, args, { encoding: 'utf8' });
      if (r.error) throw new DendrologError(messages.clusterCommandMissing(this.commands.sbatch, (r.error as NodeJS.ErrnoException).code ?? r.error.message), 2);
      job = r.status === 0 ? submittedJob(r.stdout) : null;
      if (!job) {
        const said = r.stderr || r.stdout;
        // the scheduler away is no fault of the options: exit 1, not 2
        if (/unable to contact|socket timed out|connection refused|slurm_persist_conn/i.test(said)) throw new DendrologError(messages.clusterUnreachable(said), 1);
        throw new DendrologError(messages.clusterSubmitFailed(said), 2);
      }
      if (interrupted) spawnSync(this.commands.scancel, [job], { stdio: 'ignore' });
      else {
        const steps = `${stepCount} step${stepCount === 1 ? '' : 's'}`;
        const what = indices.length === stepCount ? steps : `${steps} in ${indices.length} task${indices.length === 1 ? '' : 's'}`;
        this.progress.note(`submitted ${what} as Slurm job array ${job} (logs in ${displayOf(dir)})`);
      }
      for (let delay = 500; !interrupted; delay = Math.min(delay * 2, 5000)) {
        await new Promise<void>((done) => {
          const t = setTimeout(done, delay);
          wake = () => (clearTimeout(t), done());
        });
        if (interrupted) break;
        const records = this.records(job);
        for (const t of records ?? []) {
          if (!ACTIVE_STATES.has(t.state) && t.state !== 'COMPLETED' && !told.has(t.task)) {
            told.add(t.task);
            this.progress.note(`Slurm task ${job}_${t.task} ended ${t.state}; waiting for the other tasks, so their outputs are kept`);
          }
        }
        // a job Slurm no longer knows, or whose tasks all ended, is over
        if (records !== null && !records.some((t) => ACTIVE_STATES.has(t.state))) break;
        // one that can never start is cancelled and said, rather than waited on forever
        const stuck = records?.find(neverStarts);
        if (stuck) {
          spawnSync(this.commands.scancel, [job], { stdio: 'ignore' });
          throw new DendrologError(messages.clusterNeverStarts(job, stuck.reason), 2);
        }
      }
    } finally {
      process.removeListener('SIGINT', cancel);
      process.removeListener('SIGTERM', cancel);
    }
    if (interrupted) throw new DendrologError(messages.clusterInterrupted(job), 1);
    return job;
  }

  /**
   * What Slurm still knows of a job's tasks: none when it no longer knows the job, null when it
   * could not be asked (the controller busy or restarting), so the wait goes on.
   */
  private records(job: string): TaskRecord[] | null {
    const r = spawnSync(this.commands.scontrol, ['show', 'job', '-o', job], { encoding: 'utf8' });
    // without scontrol the end of the job cannot be told: cancel it rather than wait forever
    if (r.error) {
      spawnSync(this.commands.scancel, [job], { stdio: 'ignore' });
      throw new DendrologError(messages.clusterCommandMissing(this.commands.scontrol, (r.error as NodeJS.ErrnoException).code ?? r.error.message), 2);
    }
    if (r.status === 0) return taskRecords(r.stdout);
    return /Invalid job id/i.test(r.stderr ?? '') ? [] : null;
  }
}

/** The seconds each step took, from the `task-<i>.seconds.json` files its tasks wrote. */
function readSeconds(dir: string): Map<string, number> {
  const out = new Map<string, number>();
  for (const name of readdirSync(dir)) {
    if (!/^task-\d+\.seconds\.json$/.test(name)) continue;
    try {
      for (const [key, s] of Object.entries(parseJson(readFileSync(join(dir, name), 'utf8')) as Record<string, number>)) if (typeof s === 'number') out.set(key, s);
    } catch {
      // a task killed while writing it: its steps keep the array's time
    }
  }
  return out;
}

function readFailure(path: string): TaskFailure | null {
  if (!existsSync(path)) return null;
  try {
    return parseJson(readFileSync(path, 'utf8')) as TaskFailure;
  } catch {
    return null;
  }
}

/** A word for /bin/sh, quoted so spaces and quotes in paths stay one word. */
export function shellWord(s: string): string {
  return `'${s.replace(/'/g, `'\\''`)}'`;
}
