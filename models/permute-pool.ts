/**
 * Permutation importance of many predictors over threads: each predictor's repeats are one job
 * (predictPermuted, all repeats in one pass over the trees), claimed from a shared counter by this
 * thread and `threads - 1` workers. A job's numbers do not depend on the thread that ran it, so
 * the results are the same for any thread count.
 *
 * Example: `await permutedOnThreads(forest, bytes, x, [{columns: [0]}, {columns: [1]}], orders, 2)`
 */
import type { Matrix } from './checks.js';
import type { Forest } from './forest.js';
import { predictPermuted } from './permute.js';
import { startModuleWorker } from './worker-start.js';

export interface PermuteJob {
  forest: Uint8Array;
  x: Matrix;
  jobs: { columns: number[] }[];
  /** Per job, one order per repeat, over shared memory. */
  orders: Int32Array[][];
  counter: Int32Array;
}

/** Below this much work (rows × trees × repeats × predictors) a worker's start costs more than it saves. */
export const MIN_PERMUTE_WORK_FOR_THREADS = 20_000_000;

export async function permutedOnThreads(
  forest: Forest,
  bytes: Uint8Array,
  x: Matrix,
  jobs: { columns: number[] }[],
  orders: ArrayLike<number>[][],
  threads: number,
): Promise<Float64Array[][]> {
  const work = x.rows * forest.trees.length * jobs.reduce((n, _, j) => n + orders[j].length, 0);
  const helpers = work < MIN_PERMUTE_WORK_FOR_THREADS ? 0 : Math.min(Math.max(0, threads - 1), jobs.length - 1);
  if (helpers === 0) return jobs.map((job, j) => predictPermuted(forest, x, job.columns, orders[j]));
  const shared = orders.map((list) =>
    list.map((o) => {
      const a = new Int32Array(new SharedArrayBuffer(4 * o.length));
      a.set(o);
      return a;
    }),
  );
  const counter = new Int32Array(new SharedArrayBuffer(4));
  // filled, not sparse: some() and every() skip the holes of a sparse array
  const results = Array.from<Float64Array[] | undefined>({ length: jobs.length });
  let failure: Error | null = null;
  let wake: (() => void) | null = null;
  const notify = () => {
    const w = wake;
    wake = null;
    w?.();
  };
  const workers = Array.from({ length: helpers }, () => startModuleWorker(new URL('./permute-worker.js', import.meta.url), import.meta.url));
  try {
    for (const w of workers) {
      w.on('message', (reply: { job: number; predictions?: Float64Array[]; error?: string }) => {
        if (reply.error !== undefined) failure ??= new Error(`permutation importance failed in a worker thread: ${reply.error}`);
        else results[reply.job] = reply.predictions;
        notify();
      });
      w.on('error', (e) => {
        failure ??= e;
        notify();
      });
      w.on('exit', (code) => {
        if (code !== 0) failure ??= new Error(`a permutation worker thread exited with code ${code}`);
        notify();
      });
      w.postMessage({ forest: bytes, x, jobs, orders: shared, counter } satisfies PermuteJob);
    }
    for (let j = Atomics.add(counter, 0, 1); j < jobs.length; j = Atomics.add(counter, 0, 1)) {
      results[j] = predictPermuted(forest, x, jobs[j].columns, shared[j]);
      // let the workers' results in
      await new Promise<void>((resolve) => setImmediate(resolve));
    }
    while (failure === null && results.some((r) => r === undefined)) {
      await new Promise<void>((resolve) => {
        wake = resolve;
      });
    }
    if (failure !== null) throw failure;
    return results as Float64Array[][];
  } finally {
    for (const w of workers) void w.terminate();
  }
}
