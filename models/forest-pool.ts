/**
 * Growing a forest's trees on worker threads.
 *
 * Each worker receives the binned data once (typed arrays over SharedArrayBuffers, so nothing is
 * copied) and then tree numbers one at a time, so faster workers take more trees. A tree depends
 * only on (seed, tree number), and the caller combines results in tree order, so the forest is
 * bit-identical for any number of workers.
 *
 * Example: `await growTreesInWorkers(data, params, 100, 2, (i, grown) => combiner.add(i, grown))`
 */
import { readFileSync } from 'node:fs';
import { createRequire } from 'node:module';
import { dirname, join } from 'node:path';
import { pathToFileURL } from 'node:url';
import { Worker } from 'node:worker_threads';
import type { GrowData, GrowParams, GrownTree } from './tree-grow.js';

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

/** Grows trees 0..trees-1 on `workers` threads, calling `onTree` as each arrives (in any order). */
export function growTreesInWorkers(
  data: GrowData,
  params: GrowParams,
  trees: number,
  workers: number,
  onTree: (index: number, grown: GrownTree) => void,
): Promise<void> {
  return new Promise((resolve, reject) => {
    const pool: Worker[] = [];
    let nextTree = 0;
    let done = 0;
    let failed = false;
    const stopAll = (): void => {
      for (const w of pool) void w.terminate();
    };
    const fail = (err: Error): void => {
      if (failed) return;
      failed = true;
      stopAll();
      reject(err);
    };
    const count = Math.min(workers, trees);
    for (let k = 0; k < count; k++) {
      const worker = startWorker({ data, params });
      pool.push(worker);
      worker.on('message', (reply: Reply) => {
        if (failed) return;
        if (reply.error !== undefined || reply.grown === undefined) {
          fail(new Error(`growing tree ${reply.tree} failed in a worker thread: ${reply.error ?? 'no result'}`));
          return;
        }
        try {
          onTree(reply.tree, reply.grown);
        } catch (e) {
          fail(e as Error);
          return;
        }
        done++;
        if (nextTree < trees) worker.postMessage({ tree: nextTree++ });
        if (done === trees) {
          stopAll();
          resolve();
        }
      });
      worker.on('error', (e) => fail(e));
      worker.on('exit', (code) => {
        if (!failed && done < trees) fail(new Error(`a forest worker thread exited early (code ${code})`));
      });
      worker.postMessage({ tree: nextTree++ });
    }
  });
}

/** A Float64Array of `length` over a new SharedArrayBuffer, holding a copy of `source` if given. */
export function sharedFloat64(length: number, source?: ArrayLike<number>): Float64Array {
  const a = new Float64Array(new SharedArrayBuffer(length * 8));
  if (source) a.set(source);
  return a;
}
