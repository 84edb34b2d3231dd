import type { Worker } from 'node:worker_threads';
import { startModuleWorker } from '../models/worker-start.js';
import { DendrologError } from '../core/messages.js';
import type { StepJob, StepReply } from './step-worker.js';

/**
 * A fixed set of worker threads running step instances (runner/step-worker.ts), one job per thread
 * at a time. Results come back by job id, so the caller decides the order it uses them in.
 *
 * Example: `const pool = new StepPool(2); try { await pool.run(job) } finally { await pool.close() }`
 */
export class StepPool {
  private readonly idle: Worker[] = [];
  private readonly waiting: ((w: Worker) => void)[] = [];
  private readonly all: Worker[] = [];
  private next = 0;

  constructor(size: number) {
    for (let i = 0; i < size; i++) {
      const w = startModuleWorker(new URL('./step-worker.js', import.meta.url), import.meta.url);
      this.all.push(w);
      this.idle.push(w);
    }
  }

  /**
   * Runs one job on the next free thread; resolves with the packed output and the seconds it took on
   * that thread (time spent waiting for a free thread not counted), or rejects with its error.
   */
  async run(job: Omit<StepJob, 'id'>): Promise<{ payload: Uint8Array; seconds: number }> {
    const worker = this.idle.pop() ?? (await new Promise<Worker>((resolve) => this.waiting.push(resolve)));
    const id = this.next++;
    const t0 = performance.now();
    try {
      const payload = await new Promise<Uint8Array>((resolve, reject) => {
        const onMessage = (reply: StepReply) => {
          if (reply.id !== id) return;
          worker.off('message', onMessage);
          worker.off('error', onError);
          if ('payload' in reply) resolve(reply.payload);
          else if (reply.error.exitCode) reject(new DendrologError(reply.error.message, reply.error.exitCode));
          else reject(Object.assign(new Error(reply.error.message), { stack: reply.error.stack }));
        };
        const onError = (e: Error) => {
          worker.off('message', onMessage);
          reject(e);
        };
        worker.on('message', onMessage);
        worker.once('error', onError);
        worker.postMessage({ ...job, id } satisfies StepJob);
      });
      return { payload, seconds: (performance.now() - t0) / 1000 };
    } finally {
      const waiter = this.waiting.shift();
      if (waiter) waiter(worker);
      else this.idle.push(worker);
    }
  }

  async close(): Promise<void> {
    await Promise.all(this.all.map((w) => w.terminate()));
  }
}
