/**
 * Worker-thread entry for permutation importance on threads: reads the forest once, then claims
 * chunks of rows from the shared counter until none are left, writing every predictor's repeats for
 * them into the shared results. Started by permute-pool.ts; not imported by anything else.
 */
import { parentPort } from 'node:worker_threads';
import type { PermuteJob } from './permute-pool.js';
import { predictPermutedRows } from './permute.js';
import { deserializeForest } from './serialize.js';

const port = parentPort;
if (port === null) throw new Error('permute-worker.ts must run as a worker thread');

port.once('message', ({ forest, x, jobs, orders, out, counter, chunk }: PermuteJob) => {
  try {
    const f = deserializeForest(forest);
    for (let c = Atomics.add(counter, 0, 1); c * chunk < x.rows; c = Atomics.add(counter, 0, 1)) {
      predictPermutedRows(f, x, jobs, orders, c * chunk, Math.min(x.rows, (c + 1) * chunk), out);
    }
  } catch (e) {
    const err = e as Error;
    port.postMessage({ error: `${err.name}: ${err.message}` });
  }
  port.close();
});
