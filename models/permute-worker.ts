/**
 * Worker-thread entry for permutation importance on threads: reads the forest once, then claims
 * chunks of rows until none are left, writing every predictor's repeats for them into the shared
 * results. Started by permute-pool.ts; not imported by anything else.
 */
import { parentPort } from 'node:worker_threads';
import type { PermuteJob } from './permute-pool.js';
import { predictPermutedRows } from './permute.js';
import { claimChunks } from './row-pool.js';
import { deserializeForest } from './serialize.js';

const port = parentPort;
if (port === null) throw new Error('permute-worker.ts must run as a worker thread');

port.once('message', (job: PermuteJob) => {
  try {
    const f = deserializeForest(job.forest);
    claimChunks(job, (from, to) => predictPermutedRows(f, job.x, job.jobs, job.orders, from, to, job.out));
  } catch (e) {
    const err = e as Error;
    port.postMessage({ error: `${err.name}: ${err.message}` });
  }
  port.close();
});
