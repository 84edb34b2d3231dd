/**
 * Worker-thread entry: builds one TreeBuilder over the shared binned data it is started with, then
 * grows whichever tree numbers the main thread sends and posts each tree back (buffers transferred,
 * not copied). Started by forest-pool.ts; not imported by anything else.
 */
import { parentPort, workerData } from 'node:worker_threads';
import { TreeBuilder, type GrowData, type GrowParams } from './tree-grow.js';

interface Start {
  data: GrowData;
  params: GrowParams;
}

const port = parentPort;
if (port === null) throw new Error('forest-worker.ts must run as a worker thread');
const { data, params } = workerData as Start;
const builder = new TreeBuilder(data, params);

port.on('message', (message: { tree: number }) => {
  try {
    const grown = builder.grow(message.tree);
    const t = grown.tree;
    // Freshly allocated (never shared) buffers, so they can be moved rather than copied.
    const buffers = [t.feature, t.threshold, t.left, t.right, t.value, grown.importance, grown.oobRows, grown.oobValues];
    port.postMessage({ tree: message.tree, grown }, buffers.map((a) => a.buffer as ArrayBuffer));
  } catch (e) {
    const err = e as Error;
    port.postMessage({ tree: message.tree, error: `${err.name}: ${err.message}\n${err.stack ?? ''}` });
  }
});
