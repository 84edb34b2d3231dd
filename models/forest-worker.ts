/**
 * Worker-thread entry: builds one TreeBuilder over the shared binned data it is started with, then
 * claims tree numbers from a shared counter until none are left, posting each tree back (buffers
 * transferred, not copied). Started by forest-pool.ts; not imported by anything else.
 */
import { parentPort, workerData } from 'node:worker_threads';
import { TreeBuilder, type GrowData, type GrowParams } from './tree-grow.js';

interface Start {
  data: GrowData;
  params: GrowParams;
  trees: number;
  /** Shared Int32Array([next unclaimed tree]); claimed with Atomics.add so no tree is grown twice. */
  counter: Int32Array;
}

const port = parentPort;
if (port === null) throw new Error('forest-worker.ts must run as a worker thread');
const { data, params, trees, counter } = workerData as Start;
const builder = new TreeBuilder(data, params);

for (let tree = Atomics.add(counter, 0, 1); tree < trees; tree = Atomics.add(counter, 0, 1)) {
  try {
    const grown = builder.grow(tree);
    const t = grown.tree;
    // Freshly allocated (never shared) buffers, so they can be moved rather than copied.
    const buffers = [t.feature, t.threshold, t.left, t.right, t.value, grown.importance, grown.oobRows, grown.oobValues];
    port.postMessage({ tree, grown }, buffers.map((a) => a.buffer as ArrayBuffer));
  } catch (e) {
    const err = e as Error;
    port.postMessage({ tree, error: `${err.name}: ${err.message}\n${err.stack ?? ''}` });
    break;
  }
}
port.close();
