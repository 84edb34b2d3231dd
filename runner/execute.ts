import { decodeFrame, encodeFrame } from './frame.js';
import { sha256 } from './hash.js';
import { messages } from './messages.js';
import type { Cache } from './cache.js';
import type { Progress } from './progress.js';
import { generator, seedString } from './rng.js';
import { stepRegistry } from '../steps/index.js';
import type { FrameOutput, StepContext, StepInstance, Warning } from './step-types.js';
import { WarningLog } from './warnings.js';

export interface StepRecord {
  id: string;
  kind: string;
  key: string;
  /** SHA-256 of the step's encoded output: equal outputs, equal hashes, whatever the cache did. */
  output: string;
  status: 'ran' | 'cached';
  seconds: number;
}

export interface Execution {
  outputs: Map<string, unknown>;
  records: StepRecord[];
  warnings: Warning[];
}

/** The executor interface: something that runs planned step instances against a cache. */
export interface Executor {
  run(steps: StepInstance[]): Promise<Execution>;
}

export interface LocalExecutorOptions {
  cache: Cache | null;
  seed: number;
  workers: number;
  progress: Progress;
}

/**
 * Runs steps in plan order in this process (the forest engine spreads trees over worker threads).
 * Each step is either read from the cache, after its checksum passes, or run and stored. Outputs
 * handed downstream are always the decoded bytes, so a warm and a cold run compute on equal values.
 */
export function localExecutor(opts: LocalExecutorOptions): Executor {
  return {
    async run(steps) {
      const outputs = new Map<string, unknown>();
      const records: StepRecord[] = [];
      const warnings = new WarningLog();
      for (const step of steps) {
        const def = stepRegistry[step.kind];
        opts.progress.start(step.id);
        const t0 = performance.now();
        let entry: { payload: Uint8Array; status: 'ran' | 'cached' } | undefined;
        const cached = opts.cache?.get(step.key);
        if (cached?.status === 'hit') entry = { payload: cached.bytes, status: 'cached' };
        else if (cached?.status === 'corrupt') warnings.add('cache-corrupt', messages.cacheCorrupt(step.key));
        if (!entry) {
          const stepWarnings = new WarningLog();
          const ctx: StepContext = {
            key: step.key,
            rng: (purpose, index) => generator(opts.seed, step.seedKey, purpose, index),
            seedFor: (purpose, index) => seedString(opts.seed, step.seedKey, purpose, index),
            warn: (code, message) => stepWarnings.add(code, message),
            workers: opts.workers,
            locator: step.locator,
            progress: (f) => opts.progress.update(f),
          };
          const inputs = step.inputs.map((id) => outputs.get(id));
          const output = await def.run(inputs, step.params as never, ctx);
          const payload = packEntry(def.codec, output, stepWarnings.list());
          opts.cache?.put(step.key, payload);
          entry = { payload, status: 'ran' };
        }
        const { output, body, stepWarnings } = unpackEntry(def.codec, entry.payload);
        for (const w of stepWarnings) warnings.add(w.code, w.message, w.count);
        outputs.set(step.id, output);
        const seconds = (performance.now() - t0) / 1000;
        records.push({ id: step.id, kind: step.kind, key: step.key, output: sha256(body), status: entry.status, seconds });
        opts.progress.finish({ id: step.id, status: entry.status, seconds, summary: def.summary ? def.summary(output as never) : '' });
      }
      return { outputs, records, warnings: warnings.list() };
    },
  };
}

/** Cache payload: 4-byte length, the step's warnings as JSON, then the encoded output. */
function packEntry(codec: 'frame' | 'json', output: unknown, warnings: Warning[]): Uint8Array {
  const body =
    codec === 'frame'
      ? encodeFrame((output as FrameOutput).frame, (output as FrameOutput).notes)
      : new Uint8Array(Buffer.from(JSON.stringify(output), 'utf8'));
  const w = Buffer.from(JSON.stringify(warnings), 'utf8');
  const out = new Uint8Array(4 + w.length + body.length);
  new DataView(out.buffer).setUint32(0, w.length, true);
  out.set(w, 4);
  out.set(body, 4 + w.length);
  return out;
}

function unpackEntry(codec: 'frame' | 'json', payload: Uint8Array) {
  const n = new DataView(payload.buffer, payload.byteOffset, payload.byteLength).getUint32(0, true);
  const stepWarnings = JSON.parse(Buffer.from(payload.subarray(4, 4 + n)).toString('utf8')) as Warning[];
  const body = payload.subarray(4 + n);
  let output: unknown;
  if (codec === 'frame') {
    const { frame, notes } = decodeFrame(body);
    output = { frame, notes };
  } else output = JSON.parse(Buffer.from(body).toString('utf8'));
  return { output, body, stepWarnings };
}
