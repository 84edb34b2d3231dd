/**
 * Forest prediction of many rows over threads: chunks of rows claimed from a shared counter by this
 * thread and `threads - 1` workers, each writing its chunks' predictions into one shared result. A
 * row is predicted by one thread alone, in tree order (predictRows), so the result is the same for
 * any thread count, equal to predictUnchecked's bit for bit. The forest's bytes and the rows go to
 * the workers in shared memory when they are in it already, so a worker reads them in place.
 *
 * Example: `await predictOnThreads(forest, bytes, x, 2)`
 */
import type { Matrix } from './checks.js';
import type { Forest } from './forest.js';
import { checkPredictionMatrix, predictRows, predictUnchecked } from './predict.js';
import { startModuleWorker } from './worker-start.js';

export interface PredictJob {
  forest: Uint8Array;
  columns: Float64Array[];
  rows: number;
  out: Float64Array;
  counter: Int32Array;
  chunk: number;
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
  const columns = x.columns.map((c) => {
    if (c.buffer instanceof SharedArrayBuffer) return c;
    const s = new Float64Array(new SharedArrayBuffer(8 * c.length));
    s.set(c);
    return s;
  });
  const out = new Float64Array(new SharedArrayBuffer(8 * x.rows));
  const counter = new Int32Array(new SharedArrayBuffer(4));
  const job: PredictJob = { forest: bytes, columns, rows: x.rows, out, counter, chunk: PREDICT_CHUNK_ROWS };
  let failure: Error | null = null;
  const workers = Array.from({ length: helpers }, () => startModuleWorker(new URL('./predict-worker.js', import.meta.url), import.meta.url));
  const finished = workers.map(
    (w) =>
      new Promise<void>((resolve) => {
        w.on('message', (reply: { error?: string }) => {
          if (reply.error !== undefined) failure ??= new Error(`prediction failed in a worker thread: ${reply.error}`);
        });
        w.on('error', (e) => {
          failure ??= e;
          resolve();
        });
        w.on('exit', (code) => {
          if (code !== 0) failure ??= new Error(`a prediction worker thread exited with code ${code}`);
          resolve();
        });
      }),
  );
  try {
    for (const w of workers) w.postMessage(job);
    for (let c = Atomics.add(counter, 0, 1); c < chunks; c = Atomics.add(counter, 0, 1)) {
      predictRows(forest, columns, c * PREDICT_CHUNK_ROWS, Math.min(x.rows, (c + 1) * PREDICT_CHUNK_ROWS), out);
    }
    // a worker ends (exits) once no chunk is left, or on its first error
    await Promise.all(finished);
    if (failure !== null) throw failure;
    // out of shared memory: the caller owns an ordinary array
    return out.slice();
  } finally {
    for (const w of workers) void w.terminate();
  }
}
