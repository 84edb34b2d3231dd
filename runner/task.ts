/**
 * `dendrolog task BATCH INDEX`: what one Slurm array task runs. It reads the steps of task INDEX in a
 * batch file the Slurm executor wrote (one, or a few run in turn, or a range of one step's parts),
 * and for each takes its inputs from the shared cache by key, runs it as the local executor would,
 * and stores the output in the cache (atomically, so tasks never see a partial entry). A failure is written beside the task's log for the main process to repeat.
 */
import { readFileSync, writeFileSync } from 'node:fs';
import { dirname, join } from 'node:path';
import { Cache } from './cache.js';
import { packEntry, placeEntry, unpackEntry } from '../core/codec.js';
import { dict, parseJson } from '../core/dict.js';
import { DendrologError } from '../core/messages.js';
import { makeContext } from '../core/step-types.js';
import { WarningLog } from '../core/warnings.js';
import { stepRegistry } from '../steps/index.js';
import type { TaskBatch, TaskFailure } from './slurm.js';

/**
 * Runs one task of a batch; returns the exit code (0 when its output is in the cache).
 *
 * Example: `await runTask('/shared/cache/tasks/20261202T1200-ab12cd34/batch.json', 3)`
 */
export async function runTask(batchFile: string, index: number): Promise<number> {
  const failureFile = join(dirname(batchFile), `task-${index}.error.json`);
  let current = `task ${index}`;
  try {
    const batch = parseJson(readFileSync(batchFile, 'utf8')) as TaskBatch;
    const steps = batch.tasks[index];
    if (steps === undefined) throw new DendrologError(`task ${index} is not in ${batchFile}, which holds ${batch.tasks.length} tasks`, 2);
    const cache = new Cache(batch.cache);
    const seconds = dict<number>();
    for (const step of steps) {
      const t0 = performance.now();
      current = step.id;
      // a task submitted again (its node was lost) skips what it already stored
      if (cache.get(step).status === 'hit') continue;
      const inputs = step.inputs.map((input) => {
        const got = cache.get(input);
        if (got.status !== 'hit') throw new DendrologError(`an input of step ${step.id} (key ${input.key}) is not in the cache ${batch.cache} as seen from this node; is the cache on a file system every node shares?`, 1);
        return unpackEntry(input.codec, placeEntry(got.bytes)).output;
      });
      const def = stepRegistry[step.kind];
      const warnings = new WarningLog();
      const workers = Number(process.env.SLURM_CPUS_PER_TASK) || 1;
      const ctx = makeContext(step, { warn: (code, message) => warnings.add(code, message), workers });
      const part = step.part;
      if (part && !def.parts) throw new DendrologError(`step ${step.id} is given as parts, but steps of kind ${step.kind} do not divide`, 2);
      const output = part ? await def.parts!.run(inputs, step.params as never, ctx, part.first, part.end) : await def.run(inputs, step.params as never, ctx);
      const stored = cache.put(step, packEntry(step.codec, output, warnings.list()));
      if (!stored.stored) throw new DendrologError(`cannot write the output of step ${step.id} into the cache ${batch.cache} (${stored.code}: ${stored.detail})`, 1);
      seconds[step.key] = (performance.now() - t0) / 1000;
      process.stdout.write(`step ${step.id}: output stored under ${step.key} (${seconds[step.key].toFixed(2)} s)\n`);
    }
    // for the run's record: each step's own time, not the whole array's
    writeFileSync(join(dirname(batchFile), `task-${index}.seconds.json`), JSON.stringify(seconds));
    return 0;
  } catch (e) {
    const failure: TaskFailure = { step: current, message: (e as Error).message, exitCode: e instanceof DendrologError ? e.exitCode : null };
    process.stderr.write(`${(e as Error).stack ?? e}\n`);
    try {
      writeFileSync(failureFile, JSON.stringify(failure));
    } catch {
      // the log keeps the message anyway
    }
    return 1;
  }
}
