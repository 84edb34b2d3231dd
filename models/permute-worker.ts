/**
 * Worker-thread entry for permutation importance on threads: reads the forest once, then claims
 * predictors from the shared counter until none are left, posting each one's permuted predictions
 * back (buffers moved, not copied). Started by permute-pool.ts; not imported by anything else.
 */
import { parentPort } from 'node:worker_threads';
import type { PermuteJob } from './permute-pool.js';
import { predictPermuted } from './permute.js';
import { deserializeForest } from './serialize.js';

const port = parentPort;
if (port === null) throw new Error('permute-worker.ts must run as a worker thread');

port.once('message', ({ forest, x, jobs, orders, counter }: PermuteJob) => {
  try {
    const f = deserializeForest(forest);
    for (let j = Atomics.add(counter, 0, 1); j < jobs.length; j = Atomics.add(counter, 0, 1)) {
      const predictions = predictPermuted(f, x, jobs[j].columns, orders[j]);
      port.postMessage({ job: j, predictions }, predictions.map((p) => p.buffer as ArrayBuffer));
    }
  } catch (e) {
    const err = e as Error;
    port.postMessage({ job: -1, error: `${err.name}: ${err.message}` });
  }
  port.close();
});
