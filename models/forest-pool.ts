/**
 * Growing a forest's trees on several threads: the calling thread plus `threads - 1` worker threads.
 *
 * The workers are started first (ForestPool.start), so that their start-up (about 100 ms of loading
 * a fresh JavaScript environment) overlaps the binning the calling thread does meanwhile. They then
 * receive the binned data once (typed arrays over SharedArrayBuffers, so nothing is copied) and claim
 * tree numbers from a shared atomic counter, so no thread waits for the next assignment and faster
 * threads take more trees. The calling thread claims trees from the same counter between short
 * yields to its event loop (which is how it receives the workers' trees), so the workers' start-up
 * time is not lost. A tree depends only on (seed, tree number) and the caller combines results in
 * tree order, so the forest is bit-identical for any thread count.
 *
 * Example:
 * ```ts
 * const pool = ForestPool.start(2);
 * try { await pool.grow(data, params, 0, 100, (i, grown) => combiner.add(i, grown)); } finally { pool.close(); }
 * ```
 */
import type { Worker } from 'node:worker_threads';
import { startModuleWorker } from './worker-start.js';
import { TreeBuilder, type GrowData, type GrowParams, type GrownTree } from './tree-grow.js';

/** Starts one forest worker (see worker-start.ts for how it loads under vitest). */
function startWorker(): Worker {
  return startModuleWorker(new URL('./forest-worker.js', import.meta.url), import.meta.url);
}

/** What a worker is sent to start growing (see forest-worker.ts). */
export interface WorkerJob {
  data: GrowData;
  params: GrowParams;
  /** One past the last tree to grow. */
  trees: number;
  /** Shared Int32Array([next unclaimed tree]); claimed with Atomics.add so no tree is grown twice. */
  counter: Int32Array;
  /** With GrowParams.fitted: shared room for trees' fitted values (see FittedSlots); null otherwise. */
  slots: FittedSlots | null;
}

/**
 * Shared room where worker threads leave a tree's fitted values (a value per training row) for the
 * calling thread, instead of sending each tree a new array: at a million rows that is 8 MB a tree,
 * and memory freed that way went back to the system so slowly that a run's peak grew by hundreds of
 * megabytes. A worker takes a free slot (compare-and-swap on `free`), writes the values and names
 * the slot; the calling thread frees it once the values are added, and keeps the values of its own
 * trees that must wait for earlier ones in a slot too (ForestPool.keep). With no slot free a copy is
 * made as before, so nothing ever waits for a slot.
 */
export interface FittedSlots {
  rows: number;
  /** `count` slots of `rows` values each. */
  values: Float64Array;
  /** Per slot: 1 free, 0 taken. */
  free: Int32Array;
}

/**
 * Slots per thread growing trees (the calling thread included): three, so that while the calling
 * thread adds up one tree's values a worker can fill another and a finished tree can wait for an
 * earlier one. A setting only so that tests can take them away and check the copies made instead.
 */
export const fittedSlotSettings = { perThread: 3 };

/** Takes a free slot (its number), or -1 when none is free. */
export function takeSlot(slots: FittedSlots): number {
  for (let s = 0; s < slots.free.length; s++) if (Atomics.compareExchange(slots.free, s, 1, 0) === 1) return s;
  return -1;
}

/** A taken slot's values, and the function that frees it once they are used. */
function slotView(slots: FittedSlots, slot: number): { values: Float64Array; release: () => void } {
  return { values: slots.values.subarray(slot * slots.rows, (slot + 1) * slots.rows), release: () => Atomics.store(slots.free, slot, 1) };
}

interface Reply {
  tree: number;
  grown?: GrownTree;
  /** The slot holding the tree's fitted values, when a worker left them in one. */
  slot?: number;
  error?: string;
}

/** Worker threads started ahead of one fit; `grow` may be called once. */
export class ForestPool {
  private readonly workers: Worker[] = [];
  private failure: Error | null = null;
  private onReply: (reply: Reply) => void = () => {};
  private wake: (() => void) | null = null;
  private closed = false;
  /** The current grow's shared slots for fitted values, if it keeps them. */
  private slots: FittedSlots | null = null;

  private constructor(workers: number) {
    for (let k = 0; k < workers; k++) {
      const worker = startWorker();
      this.workers.push(worker);
      worker.on('message', (reply: Reply) => this.onReply(reply));
      worker.on('error', (e) => this.fail(e));
      worker.on('exit', (code) => {
        if (code !== 0 && !this.closed) this.fail(new Error(`a forest worker thread exited with code ${code}`));
        this.notify();
      });
    }
  }

  /** Starts `threads - 1` worker threads (none for threads <= 1); they wait for `grow`. */
  static start(threads: number): ForestPool {
    return new ForestPool(Math.max(0, threads - 1));
  }

  /** Grows trees first..end-1 on the workers and this thread, calling `onTree` as each arrives. */
  async grow(data: GrowData, params: GrowParams, first: number, end: number, onTree: (index: number, grown: GrownTree) => void): Promise<void> {
    const counter = new Int32Array(new SharedArrayBuffer(4));
    counter[0] = first;
    const trees = end;
    let done = first;
    const deliver = (index: number, grown: GrownTree): void => {
      try {
        onTree(index, grown);
        done++;
      } catch (e) {
        this.fail(e as Error, counter, trees);
      }
      this.notify();
    };
    const count = fittedSlotSettings.perThread * (this.workers.length + 1);
    const slots: FittedSlots | null =
      params.fitted === true && count > 0 ? { rows: data.rows, values: sharedFloat64(count * data.rows), free: new Int32Array(new SharedArrayBuffer(4 * count)).fill(1) } : null;
    this.slots = slots;
    this.onReply = (reply) => {
      if (reply.error !== undefined || reply.grown === undefined) {
        this.fail(new Error(`growing tree ${reply.tree} failed in a worker thread: ${reply.error ?? 'no result'}`), counter, trees);
        return;
      }
      const grown = reply.grown;
      const slot = reply.slot;
      if (slots !== null && slot !== undefined) {
        const view = slotView(slots, slot);
        grown.fitted = view.values;
        grown.release = view.release;
      }
      deliver(reply.tree, grown);
    };
    if (this.failure !== null) Atomics.store(counter, 0, trees);
    const job: WorkerJob = { data, params, trees, counter, slots };
    for (const w of this.workers) w.postMessage(job);
    const builder = new TreeBuilder(data, params);
    for (let tree = Atomics.add(counter, 0, 1); tree < trees; tree = Atomics.add(counter, 0, 1)) {
      deliver(tree, builder.grow(tree));
      // Let the workers' finished trees in.
      await new Promise<void>((resolve) => setImmediate(resolve));
    }
    while (done < trees && this.failure === null) {
      await new Promise<void>((resolve) => {
        this.wake = resolve;
      });
    }
    if (this.failure !== null) throw this.failure;
  }

  /**
   * Fitted values of this thread's tree that must wait for earlier trees (the builder will overwrite
   * them): copied into a free slot, freed by `release`, else into an array of their own.
   */
  keep(values: Float64Array): { values: Float64Array; release?: () => void } {
    const slots = this.slots;
    const slot = slots ? takeSlot(slots) : -1;
    if (!slots || slot < 0) return { values: values.slice() };
    const view = slotView(slots, slot);
    view.values.set(values);
    return view;
  }

  /** Ends the worker threads. */
  close(): void {
    this.closed = true;
    for (const w of this.workers) void w.terminate();
  }

  private fail(err: Error, counter?: Int32Array, trees?: number): void {
    if (this.failure === null) this.failure = err;
    // Stop every thread from claiming more trees.
    if (counter !== undefined && trees !== undefined) Atomics.store(counter, 0, trees);
    this.notify();
  }

  private notify(): void {
    const w = this.wake;
    this.wake = null;
    if (w) w();
  }
}

/** A Float64Array of `length` over a new SharedArrayBuffer, holding a copy of `source` if given. */
export function sharedFloat64(length: number, source?: ArrayLike<number>): Float64Array {
  const a = new Float64Array(new SharedArrayBuffer(length * 8));
  if (source) a.set(source);
  return a;
}
