/**
 * Growing a forest's trees on several threads: the calling thread plus `threads - 1` worker threads.
 *
 * Workers receive the binned data once (typed arrays over SharedArrayBuffers, so nothing is copied)
 * and claim tree numbers from a shared atomic counter, so no thread waits for the next assignment and
 * faster threads take more trees. The calling thread claims trees from the same counter between
 * short yields to its event loop (which is how it receives the workers' trees), so the workers'
 * start-up time (a few hundred milliseconds) is not lost. A tree depends only on (seed, tree number)
 * and the caller combines results in tree order, so the forest is bit-identical for any thread count.
 *
 * Example: `await growTreesThreaded(data, params, 100, 2, (i, grown) => combiner.add(i, grown))`
 */
import { readFileSync } from 'node:fs';
import { createRequire } from 'node:module';
import { dirname, join } from 'node:path';
import { pathToFileURL } from 'node:url';
import { Worker } from 'node:worker_threads';
import { TreeBuilder, type GrowData, type GrowParams, type GrownTree } from './tree-grow.js';

/**
 * Starts one worker. Compiled code (dist/models/*.js) runs forest-worker.js directly. Under vitest the
 * module is the .ts source; the worker is then the .ts file loaded through tsx's loader. Node 20
 * ignores `execArgv: ['--import', 'tsx']` for a worker's entry module (it fails with "Unknown file
 * extension .ts"), so a two-line bootstrap registers tsx's ESM loader and then imports the worker.
 */
function startWorker(workerData: unknown): Worker {
  const here = import.meta.url;
  if (here.endsWith('.ts')) {
    const entry = new URL('./forest-worker.ts', here).href;
    const bootstrap = `import(${JSON.stringify(tsxEsmApi(here))})\n  .then((tsx) => { tsx.register(); return import(${JSON.stringify(entry)}); });`;
    return new Worker(bootstrap, { eval: true, workerData });
  }
  return new Worker(new URL('./forest-worker.js', here), { workerData });
}

/** File URL of tsx's ESM loader API (its package.json "exports" entry), found from this module. */
function tsxEsmApi(from: string): string {
  const require = createRequire(from);
  const pkgPath = require.resolve('tsx/package.json');
  const pkg = JSON.parse(readFileSync(pkgPath, 'utf8')) as { exports: Record<string, { import: { default: string } }> };
  return pathToFileURL(join(dirname(pkgPath), pkg.exports['./esm/api'].import.default)).href;
}

interface Reply {
  tree: number;
  grown?: GrownTree;
  error?: string;
}

/** Grows trees 0..trees-1 on `threads` threads (this one included), calling `onTree` as each arrives. */
export async function growTreesThreaded(
  data: GrowData,
  params: GrowParams,
  trees: number,
  threads: number,
  onTree: (index: number, grown: GrownTree) => void,
): Promise<void> {
  const counter = new Int32Array(new SharedArrayBuffer(4));
  const pool: Worker[] = [];
  let done = 0;
  let failure: Error | null = null;
  let wake: (() => void) | null = null;
  const notify = (): void => {
    const w = wake;
    wake = null;
    if (w) w();
  };
  const fail = (err: Error): void => {
    if (failure === null) failure = err;
    // Stop every thread from claiming more trees.
    Atomics.store(counter, 0, trees);
    notify();
  };
  const deliver = (index: number, grown: GrownTree): void => {
    try {
      onTree(index, grown);
      done++;
    } catch (e) {
      fail(e as Error);
    }
    notify();
  };
  for (let k = 1; k < Math.min(threads, trees); k++) {
    const worker = startWorker({ data, params, trees, counter });
    pool.push(worker);
    worker.on('message', (reply: Reply) => {
      if (reply.error !== undefined || reply.grown === undefined) {
        fail(new Error(`growing tree ${reply.tree} failed in a worker thread: ${reply.error ?? 'no result'}`));
      } else deliver(reply.tree, reply.grown);
    });
    worker.on('error', (e) => fail(e));
    worker.on('exit', (code) => {
      if (code !== 0) fail(new Error(`a forest worker thread exited with code ${code}`));
      notify();
    });
  }
  try {
    const builder = new TreeBuilder(data, params);
    for (let tree = Atomics.add(counter, 0, 1); tree < trees; tree = Atomics.add(counter, 0, 1)) {
      deliver(tree, builder.grow(tree));
      // Let the workers' finished trees in.
      await new Promise<void>((resolve) => setImmediate(resolve));
    }
    while (done < trees && failure === null) {
      await new Promise<void>((resolve) => {
        wake = resolve;
      });
    }
  } finally {
    for (const w of pool) void w.terminate();
  }
  if (failure !== null) throw failure;
}

/** A Float64Array of `length` over a new SharedArrayBuffer, holding a copy of `source` if given. */
export function sharedFloat64(length: number, source?: ArrayLike<number>): Float64Array {
  const a = new Float64Array(new SharedArrayBuffer(length * 8));
  if (source) a.set(source);
  return a;
}
