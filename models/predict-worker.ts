/**
 * Worker-thread entry for forest prediction on threads: reads the forest once, then claims chunks of
 * rows until none are left, writing their predictions into the shared result. Started by
 * predict-pool.ts; not imported by anything else.
 */
import { parentPort } from 'node:worker_threads';
import type { PredictJob } from './predict-pool.js';
import { predictRows } from './predict.js';
import { claimChunks } from './row-pool.js';
import { deserializeForest } from './serialize.js';

const port = parentPort;
if (port === null) throw new Error('predict-worker.ts must run as a worker thread');

port.once('message', (job: PredictJob) => {
  try {
    const f = deserializeForest(job.forest);
    claimChunks(job, (from, to) => predictRows(f, job.columns, from, to, job.out));
  } catch (e) {
    const err = e as Error;
    port.postMessage({ error: `${err.name}: ${err.message}` });
  }
  port.close();
});
