/**
 * Worker-thread entry: waits for one job (the shared binned data, the growth settings and a shared
 * tree counter), builds one TreeBuilder, then claims tree numbers from the counter until none are
 * left, posting each tree back (buffers transferred, not copied). Started by forest-pool.ts; not
 * imported by anything else.
 */
import { parentPort } from 'node:worker_threads';
import { takeSlot, type WorkerJob } from './forest-pool.js';
import { TreeBuilder } from './tree-grow.js';

const port = parentPort;
if (port === null) throw new Error('forest-worker.ts must run as a worker thread');

port.once('message', ({ data, params, trees, counter, slots }: WorkerJob) => {
  const builder = new TreeBuilder(data, params);
  for (let tree = Atomics.add(counter, 0, 1); tree < trees; tree = Atomics.add(counter, 0, 1)) {
    try {
      const grown = builder.grow(tree);
      const t = grown.tree;
      // the fitted values (the builder's scratch) go into a free shared slot, else as a copy
      const slot = grown.fitted && slots ? takeSlot(slots) : -1;
      if (grown.fitted && slot >= 0) {
        slots!.values.set(grown.fitted, slot * slots!.rows);
        delete grown.fitted;
      } else if (grown.fitted) grown.fitted = grown.fitted.slice();
      delete grown.fittedScratch;
      // Freshly allocated (never shared) buffers, so they can be moved rather than copied.
      const buffers = [t.feature, t.thresholdOrValue, t.right, t.draws, grown.importance, grown.oobRows, grown.oobValues, ...(grown.fitted ? [grown.fitted] : [])];
      port.postMessage({ tree, grown, ...(slot >= 0 ? { slot } : {}) }, buffers.map((a) => a.buffer as ArrayBuffer));
    } catch (e) {
      const err = e as Error;
      port.postMessage({ tree, error: `${err.name}: ${err.message}\n${err.stack ?? ''}` });
      break;
    }
  }
  port.close();
});
