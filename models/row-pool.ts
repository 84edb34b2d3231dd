/**
 * Rows of one computation spread over threads: chunks of `chunk` rows claimed from a shared counter
 * by this thread and by worker threads, each writing its rows' results into shared memory. A row's
 * result must depend on that row alone, so the results are the same for any thread count. Used by
 * predict-pool.ts and permute-pool.ts, whose workers claim chunks with `claimChunks`.
 *
 * Example: `await rowsOnThreads(new URL('./predict-worker.js', import.meta.url), import.meta.url, job, 1, 'prediction', (from, to) => …)`
 */
import { startModuleWorker } from './worker-start.js';

/** What every job sent to a worker holds: the row count, the shared counter and the chunk size. */
export interface RowJob {
  rows: number;
  counter: Int32Array;
  chunk: number;
}

/** Calls `work(from, to)` for each chunk of rows still unclaimed in `job`. */
export function claimChunks(job: RowJob, work: (from: number, to: number) => void): void {
  const { rows, counter, chunk } = job;
  for (let c = Atomics.add(counter, 0, 1); c * chunk < rows; c = Atomics.add(counter, 0, 1)) work(c * chunk, Math.min(rows, (c + 1) * chunk));
}

/**
 * Starts `helpers` workers from `entry` with `job`, claims chunks here with `work` too, and resolves
 * once every worker has ended; rejects naming `what` if one failed (it posts `{error}` and ends).
 */
export async function rowsOnThreads(entry: URL, caller: string, job: RowJob, helpers: number, what: string, work: (from: number, to: number) => void): Promise<void> {
  let failure: Error | null = null;
  const workers = Array.from({ length: helpers }, () => startModuleWorker(entry, caller));
  const finished = workers.map(
    (w) =>
      new Promise<void>((resolve) => {
        w.on('message', (reply: { error?: string }) => {
          if (reply.error !== undefined) failure ??= new Error(`${what} failed in a worker thread: ${reply.error}`);
        });
        w.on('error', (e) => {
          failure ??= e;
          resolve();
        });
        w.on('exit', (code) => {
          if (code !== 0) failure ??= new Error(`a ${what} worker thread exited with code ${code}`);
          resolve();
        });
      }),
  );
  try {
    for (const w of workers) w.postMessage(job);
    claimChunks(job, work);
    // a worker ends (exits) once no chunk is left, or on its first error
    await Promise.all(finished);
    if (failure !== null) throw failure;
  } finally {
    for (const w of workers) void w.terminate();
  }
}

/** A copy of `a` in shared memory, unless it is there already. */
export function sharedFloat64(a: Float64Array): Float64Array {
  if (a.buffer instanceof SharedArrayBuffer) return a;
  const s = new Float64Array(new SharedArrayBuffer(8 * a.length));
  s.set(a);
  return s;
}
