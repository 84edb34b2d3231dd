import { stepRegistry } from '../steps/index.js';
import type { Cache } from './cache.js';
import { packEntry, placeEntry, unpackEntry } from '../core/codec.js';
import { sha256 } from '../core/hash.js';
import { DendrologError, messages } from '../core/messages.js';
import type { Progress } from './progress.js';
import { StepPool } from './step-pool.js';
import { displayOf } from './paths.js';
import { makeContext, seededBy, type OutputCodec, type StepInstance, type Warning } from '../core/step-types.js';
import { WarningLog } from '../core/warnings.js';
import type { RemoteRunner, TaskStep } from './slurm.js';
import { mergeParts, partTasks } from './parts.js';

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
  /** Steps that ran on the worker-thread pool rather than in this thread. */
  onThreads: number;
}

/**
 * A parallel step whose work (StepParts.divide: parts × work of a part; for a forest, rows drawn ×
 * trees) is at least `work` runs on a thread of its own even when no other step runs beside it: the
 * thread ends with the step and takes its garbage along (a million-row forest's trees, a gigabyte,
 * which the collector otherwise frees at its own pace while the next steps allocate). Smaller steps
 * run here, sparing the thread's start. A setting only so that tests can lower it.
 */
export const isolateSettings = { work: 50_000_000 };

/** A step's output as decoded from its packed bytes, fresh or cached. */
type Decoded = ReturnType<typeof unpackEntry>;

/** The executor interface: something that runs planned step instances against a cache. */
export interface Executor {
  run(steps: StepInstance[]): Promise<Execution>;
}

export interface LocalExecutorOptions {
  cache: Cache | null;
  workers: number;
  progress: Progress;
  /**
   * Where the parallel steps run instead of this machine's threads (the Slurm executor): it reads
   * their inputs from the cache and writes their outputs there, so the cache must be shared.
   */
  remote?: RemoteRunner;
}

/**
 * Runs steps in plan order on this machine. Each step is either read from the cache, after its
 * entry proves to hold this key, in this codec, with a passing checksum and a body that decodes, or
 * run and stored; an entry that fails any of these is discarded with a warning and recomputed. A
 * cache that refuses a write is warned about once and not written again in this run. Consecutive
 * steps marked `parallel` that do not depend on one another (grid cells, final fits, explanations)
 * run side by side on a pool of `workers` threads, one step per thread, the batch's last ones free to
 * spread their own work (a forest's trees) over `workers` threads as well (see runOnPool); every
 * other step runs here, spreading its
 * trees, predictions and permutations over the threads. Outputs handed downstream are
 * always the decoded bytes, so a warm and a cold run, and any number of threads, compute on equal
 * values.
 */
export function localExecutor(opts: LocalExecutorOptions): Executor {
  return {
    async run(steps) {
      const outputs = new Map<string, unknown>();
      const bodies = new Map<string, { codec: OutputCodec; body: Uint8Array }>();
      const records: StepRecord[] = [];
      const warnings = new WarningLog();
      let pool: StepPool | null = null;
      let onThreads = 0;

      let cacheWritable = true;
      // cache trouble is shown as it happens and kept with the run's warnings
      const cacheWarning = (code: string, message: string) => {
        warnings.add(code, message);
        opts.progress.note(message);
      };
      /** The step's cached output, decoded; null when there is none or it cannot be trusted. */
      const lookup = (step: StepInstance): Decoded | null => {
        const cache = opts.cache;
        if (!cache) return null;
        const codec = stepRegistry[step.kind].codec;
        const got = cache.get({ kind: step.kind, key: step.key, codec });
        if (got.status === 'hit') {
          try {
            return unpackEntry(codec, placeEntry(got.bytes));
          } catch (e) {
            // bytes that pass their checksum yet do not decode would otherwise stop every later run
            cache.discard(step);
            cacheWarning('cache-undecodable', messages.cacheEntryUndecodable(step.id, step.key, (e as Error).message));
            return null;
          }
        }
        if (got.status === 'discarded') {
          if (got.reason === 'checksum') cacheWarning('cache-corrupt', messages.cacheCorrupt(step.key));
          else if (got.reason === 'key') cacheWarning('cache-other-key', messages.cacheEntryOtherKey(step.id, step.key, got.storedKey));
          else if (got.reason === 'codec') cacheWarning('cache-other-codec', messages.cacheEntryOtherCodec(step.id, step.key, got.storedCodec, codec));
          else cacheWarning('cache-unknown-format', messages.cacheEntryUnknownFormat(step.id, step.key, got.start));
        }
        return null;
      };
      /** Stores a freshly computed output and decodes it, so downstream sees what a warm run would. */
      const store = (step: StepInstance, payload: Uint8Array): Decoded => {
        const codec = stepRegistry[step.kind].codec;
        if (opts.cache && cacheWritable) {
          const written = opts.cache.put({ kind: step.kind, key: step.key, codec }, payload);
          if (!written.stored) {
            // cluster tasks read their inputs from the cache: without it they cannot run
            if (opts.remote) throw new DendrologError(messages.clusterCacheUnwritable(displayOf(opts.cache.dir)), 1);
            // one line for the whole run: a full or read-only disk refuses every later write too
            cacheWritable = false;
            cacheWarning('cache-unwritable', messages.cacheUnwritable(displayOf(opts.cache.dir), written.code));
          }
        }
        return unpackEntry(codec, placeEntry(payload));
      };
      const outputHash = new Map<string, string>();
      /** The instance with the contents of its inputs in its seedKey, as it runs (see seededBy). */
      const asRun = <T extends StepInstance>(step: T): T => seededBy(step, stepRegistry[step.kind].seedInputs, (id) => outputHash.get(id)!);
      const runHere = async (planned: StepInstance): Promise<Uint8Array> => {
        const step = asRun(planned);
        const def = stepRegistry[step.kind];
        const stepWarnings = new WarningLog();
        const ctx = makeContext(step, {
          warn: (code, message) => stepWarnings.add(code, message),
          workers: opts.workers,
          progress: (f) => opts.progress.update(f),
        });
        const output = await def.run(
          step.inputs.map((id) => outputs.get(id)),
          step.params as never,
          ctx,
        );
        return packEntry(def.codec, output, stepWarnings.list());
      };
      /**
       * Runs a step on the pool. Steps run side by side, one per thread, each on one thread, except
       * the last `workers - 1` of the batch's steps that run (`place` of `count`): those may spread
       * their trees over every thread, so that when one runs alone at the end of the batch (the fifth
       * of five folds on two threads) the other cores help it instead of idling. Earlier steps keep to
       * one thread, which spares starting helper threads and sharing cores among more threads than
       * there are (a fifth slower at 16,000 rows). The thread count never changes a number.
       */
      const runOnPool = (planned: StepInstance, place: number, count: number): Promise<{ payload: Uint8Array; seconds: number }> => {
        const step = asRun(planned);
        pool ??= new StepPool(opts.workers);
        onThreads++;
        return pool.run({
          threads: place >= count - (opts.workers - 1) ? opts.workers : 1,
          kind: step.kind,
          params: step.params,
          seed: step.seed,
          key: step.key,
          seedKey: step.seedKey,
          locator: step.locator,
          inputs: step.inputs.map((id) => bodies.get(id)!),
        });
      };
      const settle = (step: StepInstance, entry: Decoded, status: 'ran' | 'cached', seconds: number) => {
        const def = stepRegistry[step.kind];
        const { output, body, stepWarnings } = entry;
        for (const w of stepWarnings) warnings.add(w.code, w.message, w.count);
        outputs.set(step.id, output);
        bodies.set(step.id, { codec: def.codec, body });
        const hash = sha256(body);
        outputHash.set(step.id, hash);
        records.push({ id: step.id, kind: step.kind, key: step.key, output: hash, status, seconds });
        opts.progress.finish({ id: step.id, status, seconds, summary: def.summary ? def.summary(output as never) : '' });
      };

      const byId = new Map(steps.map((s) => [s.id, s]));
      /**
       * Heavy steps as cluster tasks: those not cached are submitted, then read back from the cache.
       * A step that divides into parts (a big forest) goes as several tasks, merged here; parts
       * already in the cache from an interrupted run are not submitted again.
       */
      const runRemote = async (batch: StepInstance[], remote: RemoteRunner, cache: Cache) => {
        const t0 = performance.now();
        const hits = batch.map(lookup);
        const missing = batch.filter((_, k) => hits[k] === null);
        let taskSeconds = new Map<string, number>();
        const divided = new Map<string, TaskStep[]>();
        const merged = new Map<string, Decoded>();
        opts.progress.start(`${missing.length} of ${batch.length} steps as cluster tasks`);
        if (missing.length > 0) {
          const inputOf = (id: string) => {
            const s = byId.get(id)!;
            return { kind: s.kind, key: s.key, codec: stepRegistry[s.kind].codec };
          };
          const tasks = missing.map(asRun).flatMap((s): TaskStep[] => {
            const task: TaskStep = { ...s, codec: stepRegistry[s.kind].codec, inputs: s.inputs.map(inputOf) };
            const parts = partTasks(task, s.inputs.map((id) => outputs.get(id)), (d) => remote.partsPerTask(d));
            if (!parts) return [task];
            divided.set(s.id, parts);
            return parts.filter((p) => cache.get(p).status !== 'hit');
          });
          if (tasks.length > 0) taskSeconds = await remote.run(tasks);
        }
        for (const [id, parts] of divided) {
          const step = asRun(byId.get(id)!);
          const t = performance.now();
          const entry = store(step, await mergeParts(step, parts, step.inputs.map((i) => outputs.get(i)), cache, opts.workers));
          // the parts are only a way to this output: once it is stored they go
          for (const p of parts) cache.discard(p);
          const seconds = parts.reduce((sum, p) => sum + (taskSeconds.get(p.key) ?? 0), (performance.now() - t) / 1000);
          taskSeconds.set(step.key, seconds);
          merged.set(step.id, entry);
        }
        const seconds = (performance.now() - t0) / 1000;
        batch.forEach((step, k) => {
          const entry = hits[k] ?? merged.get(step.id) ?? lookup(step);
          if (!entry) throw new DendrologError(messages.clusterOutputUnreadable(step.id, step.key), 1);
          // a step's own time where its task said it, else the array's
          settle(step, entry, hits[k] ? 'cached' : 'ran', hits[k] ? 0 : (taskSeconds.get(step.key) ?? seconds));
        });
      };

      try {
        for (let i = 0; i < steps.length; ) {
          const batch = parallelBatch(steps, i);
          if (opts.remote && batch.length > 0) {
            // cluster tasks read and write the shared cache: the command line refuses --no-cache with them
            if (!opts.cache) throw new Error('internal: the Slurm executor needs a cache');
            await runRemote(batch, opts.remote, opts.cache);
            i += batch.length;
            continue;
          }
          const t0 = performance.now();
          if (batch.length < 2 || opts.workers < 2) {
            const step = steps[i];
            // looked up before the progress line starts, so a cache warning gets a line of its own
            const hit = lookup(step);
            opts.progress.start(step.id);
            let entry = hit;
            if (!entry && batch.length === 1 && opts.workers > 1 && heavy(step, (id) => outputs.get(id))) {
              const r = await runOnPool(step, 0, 1);
              await (pool as StepPool | null)?.close();
              pool = null;
              entry = store(step, r.payload);
            }
            entry ??= store(step, await runHere(step));
            settle(step, entry, hit ? 'cached' : 'ran', (performance.now() - t0) / 1000);
            i++;
            continue;
          }
          const hits = batch.map(lookup);
          const misses = hits.filter((h) => h === null).length;
          opts.progress.start(`${misses} of ${batch.length} steps on ${Math.min(opts.workers, misses)} threads`);
          let place = 0;
          const results = await Promise.all(
            batch.map(async (step, k) => {
              if (hits[k]) return { payload: null, seconds: 0 };
              if (misses > 1) return runOnPool(step, place++, misses);
              const t = performance.now();
              const payload = await runHere(step);
              return { payload, seconds: (performance.now() - t) / 1000 };
            }),
          );
          // lines, cache writes and outputs follow plan order, whatever order the threads finished in
          batch.forEach((step, k) => {
            const r = results[k];
            settle(step, hits[k] ?? store(step, r.payload!), hits[k] ? 'cached' : 'ran', r.seconds);
          });
          i += batch.length;
          // the threads go with their batch: an idle thread never collects its garbage (a fold's
          // forest, most of a large run's memory), and a new batch starts them afresh in a blink
          if (pool) {
            await (pool as StepPool).close();
            pool = null;
          }
        }
      } finally {
        if (pool) await (pool as StepPool).close();
      }
      return { outputs, records, warnings: warnings.list(), onThreads };
    },
  };
}

/** Whether a parallel step's work reaches isolateSettings.work (steps that do not divide have none to measure). */
function heavy(step: StepInstance, outputOf: (id: string) => unknown): boolean {
  const def = stepRegistry[step.kind];
  if (!def.parallel || !def.parts) return false;
  const d = def.parts.divide(step.inputs.map(outputOf), step.params as never);
  return d.count * d.work >= isolateSettings.work;
}

/** The steps from `start` on that may run side by side: consecutive, parallel, not feeding each other. */
function parallelBatch(steps: StepInstance[], start: number): StepInstance[] {
  const batch: StepInstance[] = [];
  const ids = new Set<string>();
  for (let j = start; j < steps.length; j++) {
    const s = steps[j];
    if (!stepRegistry[s.kind].parallel || s.inputs.some((id) => ids.has(id))) break;
    batch.push(s);
    ids.add(s.id);
  }
  return batch;
}
