/**
 * Permutation importance of many predictors over threads: chunks of rows claimed from a shared
 * counter by this thread and `threads - 1` workers, each computing every predictor's repeats for
 * its rows (predictPermutedRows: one walk of a row's path serves every predictor) into shared
 * results. A row's numbers do not depend on the thread or the rows computed with it, so the results
 * are the same for any thread count.
 *
 * Example: `await permutedOnThreads(forest, bytes, x, [{columns: [0]}, {columns: [1]}], orders, 2)`
 */
import type { Matrix } from './checks.js';
import type { Forest } from './forest.js';
import { checkPredictionMatrix } from './predict.js';
import { predictPermutedRows } from './permute.js';
import { startModuleWorker } from './worker-start.js';

export interface PermuteJob {
  forest: Uint8Array;
  x: Matrix;
  jobs: { columns: number[] }[];
  /** Per job, one order per repeat, over shared memory. */
  orders: Int32Array[][];
  /** Per job, one result per repeat, over shared memory. */
  out: Float64Array[][];
  counter: Int32Array;
  chunk: number;
}

/** Below this much work (rows × trees × repeats × predictors) a worker's start costs more than it saves. */
export const MIN_PERMUTE_WORK_FOR_THREADS = 20_000_000;
/** Rows per claimed chunk: small enough that the threads finish together. */
export const PERMUTE_CHUNK_ROWS = 256;

export async function permutedOnThreads(
  forest: Forest,
  bytes: Uint8Array,
  x: Matrix,
  jobs: { columns: number[] }[],
  orders: ArrayLike<number>[][],
  threads: number,
): Promise<Float64Array[][]> {
  checkPredictionMatrix(forest, x);
  const chunks = Math.ceil(x.rows / PERMUTE_CHUNK_ROWS);
  const work = x.rows * forest.trees.length * jobs.reduce((n, _, j) => n + orders[j].length, 0);
  const helpers = work < MIN_PERMUTE_WORK_FOR_THREADS ? 0 : Math.min(Math.max(0, threads - 1), chunks - 1);
  if (helpers === 0) {
    const out = orders.map((list) => list.map(() => new Float64Array(x.rows)));
    predictPermutedRows(forest, x, jobs, orders, 0, x.rows, out);
    return out;
  }
  const sharedCopy = <T extends Int32Array | Float64Array>(a: ArrayLike<number>, make: (b: SharedArrayBuffer) => T, bytesPer: number): T => {
    const s = make(new SharedArrayBuffer(bytesPer * a.length));
    s.set(a);
    return s;
  };
  const shared: PermuteJob = {
    forest: bytes,
    x: { ...x, columns: x.columns.map((c) => (c.buffer instanceof SharedArrayBuffer ? c : sharedCopy(c, (b) => new Float64Array(b), 8))) },
    jobs,
    orders: orders.map((list) => list.map((o) => sharedCopy(o, (b) => new Int32Array(b), 4))),
    out: orders.map((list) => list.map(() => new Float64Array(new SharedArrayBuffer(8 * x.rows)))),
    counter: new Int32Array(new SharedArrayBuffer(4)),
    chunk: PERMUTE_CHUNK_ROWS,
  };
  let failure: Error | null = null;
  const workers = Array.from({ length: helpers }, () => startModuleWorker(new URL('./permute-worker.js', import.meta.url), import.meta.url));
  const finished = workers.map(
    (w) =>
      new Promise<void>((resolve) => {
        w.on('message', (reply: { error?: string }) => {
          if (reply.error !== undefined) failure ??= new Error(`permutation importance failed in a worker thread: ${reply.error}`);
        });
        w.on('error', (e) => {
          failure ??= e;
          resolve();
        });
        w.on('exit', (code) => {
          if (code !== 0) failure ??= new Error(`a permutation worker thread exited with code ${code}`);
          resolve();
        });
      }),
  );
  try {
    for (const w of workers) w.postMessage(shared);
    const { counter, chunk, out } = shared;
    for (let c = Atomics.add(counter, 0, 1); c < chunks; c = Atomics.add(counter, 0, 1)) {
      predictPermutedRows(forest, shared.x, jobs, shared.orders, c * chunk, Math.min(x.rows, (c + 1) * chunk), out);
    }
    // a worker ends (exits) once no chunk is left, or on its first error
    await Promise.all(finished);
    if (failure !== null) throw failure;
    // out of shared memory: the caller owns ordinary arrays
    return out.map((list) => list.map((a) => a.slice()));
  } finally {
    for (const w of workers) void w.terminate();
  }
}
