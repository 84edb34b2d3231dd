/**
 * Worker-thread entry for forest prediction on threads: reads the forest once, then claims chunks of
 * rows from the shared counter until none are left, writing their predictions into the shared
 * result. Started by predict-pool.ts; not imported by anything else.
 */
import { parentPort } from 'node:worker_threads';
import type { PredictJob } from './predict-pool.js';
import { predictRows } from './predict.js';
import { deserializeForest } from './serialize.js';

const port = parentPort;
if (port === null) throw new Error('predict-worker.ts must run as a worker thread');

port.once('message', ({ forest, columns, rows, out, counter, chunk }: PredictJob) => {
  try {
    const f = deserializeForest(forest);
    for (let c = Atomics.add(counter, 0, 1); c * chunk < rows; c = Atomics.add(counter, 0, 1)) predictRows(f, columns, c * chunk, Math.min(rows, (c + 1) * chunk), out);
  } catch (e) {
    const err = e as Error;
    port.postMessage({ error: `${err.name}: ${err.message}` });
  }
  port.close();
});
