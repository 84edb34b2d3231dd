/**
 * Forest prediction of many rows over threads (row-pool.ts): a row is predicted by one thread alone,
 * in tree order (predictRows), so the result is the same for any thread count, equal to
 * predictUnchecked's bit for bit. The forest's bytes and the rows go to the workers in shared memory
 * when they are in it already, so a worker reads them in place.
 *
 * Example: `await predictOnThreads(forest, bytes, x, 2)`
 */
import type { Matrix } from './checks.js';
import type { Forest } from './forest.js';
import { checkPredictionMatrix, predictRows, predictUnchecked } from './predict.js';
import { rowsOnThreads, sharedFloat64, type RowJob } from './row-pool.js';

export interface PredictJob extends RowJob {
  forest: Uint8Array;
  columns: Float64Array[];
  out: Float64Array;
}

/** Below this much work (rows × trees) a worker's start (about 0.1 s) costs more than it saves. */
export const MIN_PREDICT_WORK_FOR_THREADS = 20_000_000;
/** Rows per claimed chunk. */
export const PREDICT_CHUNK_ROWS = 16_384;

export async function predictOnThreads(forest: Forest, bytes: Uint8Array, x: Matrix, threads: number): Promise<Float64Array> {
  checkPredictionMatrix(forest, x);
  const chunks = Math.ceil(x.rows / PREDICT_CHUNK_ROWS);
  const helpers = x.rows * forest.trees.length < MIN_PREDICT_WORK_FOR_THREADS ? 0 : Math.min(threads - 1, chunks - 1);
  if (helpers <= 0) return predictUnchecked(forest, x.columns, x.rows);
  const job: PredictJob = {
    forest: bytes,
    columns: x.columns.map(sharedFloat64),
    rows: x.rows,
    out: new Float64Array(new SharedArrayBuffer(8 * x.rows)),
    counter: new Int32Array(new SharedArrayBuffer(4)),
    chunk: PREDICT_CHUNK_ROWS,
  };
  await rowsOnThreads(new URL('./predict-worker.js', import.meta.url), import.meta.url, job, helpers, 'prediction', (from, to) => predictRows(forest, job.columns, from, to, job.out));
  // out of shared memory: the caller owns an ordinary array
  return job.out.slice();
}
