/**
 * A worker thread that runs one step instance at a time from its description (kind, params, seed
 * key, locator) and its inputs' encoded bytes, and answers with the packed output. It never touches
 * the cache: the main thread reads and writes it, so the cache stays the single place outputs live.
 */
import { parentPort } from 'node:worker_threads';
import { poolKinds } from '../steps/pool-kinds.js';
import { decodeOutput, packEntry } from '../core/codec.js';
import { DendrologError } from '../core/messages.js';
import { makeContext, type OutputCodec } from '../core/step-types.js';
import { WarningLog } from '../core/warnings.js';

/** What the executor sends for one step. */
export interface StepJob {
  id: number;
  kind: string;
  params: unknown;
  seed: number;
  key: string;
  seedKey: string;
  locator: Record<string, string>;
  inputs: { codec: OutputCodec; body: Uint8Array }[];
  /** Threads the step's own work may use (a forest's trees): 1, or the pool's size for a batch's last steps. */
  threads: number;
}

/** What comes back: the packed output, or the error to rethrow in the main thread. */
export type StepReply = { id: number; payload: Uint8Array } | { id: number; error: { message: string; exitCode: 1 | 2 | null; stack?: string } };

const port = parentPort;
if (port) {
  port.on('message', async (job: StepJob) => {
    try {
      const load = poolKinds.get(job.kind);
      if (!load) throw new Error(`internal: step kind ${job.kind} does not run on pool threads (steps/pool-kinds.ts)`);
      const def = await load();
      const warnings = new WarningLog();
      const ctx = makeContext(job, { warn: (code, message) => warnings.add(code, message), workers: job.threads });
      const output = await def.run(job.inputs.map((i) => decodeOutput(i.codec, i.body)), job.params as never, ctx);
      const payload = packEntry(def.codec, output, warnings.list());
      // a large payload is in shared memory, which is shared rather than moved
      const shared = payload.buffer instanceof SharedArrayBuffer;
      port.postMessage({ id: job.id, payload } satisfies StepReply, shared ? [] : [payload.buffer as ArrayBuffer]);
    } catch (e) {
      const err = e as Error;
      const exitCode = e instanceof DendrologError ? e.exitCode : null;
      port.postMessage({ id: job.id, error: { message: err.message, exitCode, stack: err.stack } } satisfies StepReply);
    }
  });
}
