/**
 * Permutation importance of many predictors over threads (row-pool.ts): each thread computes every
 * predictor's repeats for the chunks of rows it claims (predictPermutedRows: one walk of a row's
 * path serves every predictor) into shared results. A row's numbers do not depend on the thread or
 * the rows computed with it, so the results are the same for any thread count.
 *
 * Example: `await permutedOnThreads(forest, bytes, x, [{columns: [0]}, {columns: [1]}], orders, 2)`
 */
import type { Matrix } from './checks.js';
import type { Forest } from './forest.js';
import { checkPredictionMatrix } from './predict.js';
import { predictPermutedRows } from './permute.js';
import { rowsOnThreads, sharedFloat64, type RowJob } from './row-pool.js';

export interface PermuteJob extends RowJob {
  forest: Uint8Array;
  x: Matrix;
  jobs: { columns: number[] }[];
  /** Per job, one order per repeat, over shared memory. */
  orders: Int32Array[][];
  /** Per job, one result per repeat, over shared memory. */
  out: Float64Array[][];
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
  const job: PermuteJob = {
    forest: bytes,
    x: { ...x, columns: x.columns.map(sharedFloat64) },
    jobs,
    orders: orders.map((list) =>
      list.map((o) => {
        const s = new Int32Array(new SharedArrayBuffer(4 * o.length));
        s.set(o);
        return s;
      }),
    ),
    out: orders.map((list) => list.map(() => new Float64Array(new SharedArrayBuffer(8 * x.rows)))),
    rows: x.rows,
    counter: new Int32Array(new SharedArrayBuffer(4)),
    chunk: PERMUTE_CHUNK_ROWS,
  };
  await rowsOnThreads(new URL('./permute-worker.js', import.meta.url), import.meta.url, job, helpers, 'permutation importance', (from, to) =>
    predictPermutedRows(forest, job.x, jobs, job.orders, from, to, job.out),
  );
  // out of shared memory: the caller owns ordinary arrays
  return job.out.map((list) => list.map((a) => a.slice()));
}
