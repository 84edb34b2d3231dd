/**
 * Steps whose work divides into parts (a final forest's blocks of trees), run as several cluster
 * tasks and merged back here. Each task grows a range of parts and stores the bytes under a key of
 * its own (the step's key and the range); the main process merges all ranges, in order, into the
 * step's output, which is bit for bit what running the step whole gives, and then removes the part
 * entries it no longer needs. Where a step ran and in how many parts never enters its key.
 */
import { packEntry, placeEntry, unpackEntry } from '../core/codec.js';
import { sha256 } from '../core/hash.js';
import { DendrologError, messages } from '../core/messages.js';
import { makeContext, type PartDivision, type StepInstance } from '../core/step-types.js';
import { WarningLog } from '../core/warnings.js';
import { stepRegistry } from '../steps/index.js';
import type { Cache } from './cache.js';
import type { TaskStep } from './slurm.js';

/**
 * The cache key of parts first..end-1 of the step with key `key`.
 *
 * Example: `partKey(step.key, 0, 2)` differs from `partKey(step.key, 0, 3)` and from `step.key`.
 */
export function partKey(key: string, first: number, end: number): string {
  return sha256(`${key}\nparts ${first}-${end}`);
}

/**
 * A step's task split into one task per range of parts, each range `perTask(division)` parts long;
 * null when the step does not divide or would fit in one task anyway.
 *
 * Example: a forest fit of 500 trees with 4 parts (200 trees) to a task gives tasks for trees 1-200, 201-400 and 401-500.
 */
export function partTasks(task: TaskStep, inputs: unknown[], perTask: (d: PartDivision) => number): TaskStep[] | null {
  const parts = stepRegistry[task.kind].parts;
  if (!parts) return null;
  const d = parts.divide(inputs, task.params as never);
  const per = Math.max(1, perTask(d));
  if (d.count <= 1 || per >= d.count) return null;
  const out: TaskStep[] = [];
  for (let first = 0; first < d.count; first += per) {
    const end = Math.min(first + per, d.count);
    const range = `${d.unit} ${first * d.perPart + 1}-${Math.min(end * d.perPart, d.total)}`;
    out.push({ ...task, id: `${task.id} (${range})`, key: partKey(task.key, first, end), codec: 'bytes', part: { first, end, of: task.key } });
  }
  return out;
}

/**
 * The packed output of a divided step from its parts in the cache. Its warnings are the merge's:
 * the merge redoes the preparation every part did (features learned on the same rows), so they are
 * the warnings of the step run whole, where the parts' would repeat them once per part. Throws
 * naming the part when one cannot be read.
 */
export async function mergeParts(step: StepInstance, parts: TaskStep[], inputs: unknown[], cache: Cache, workers: number): Promise<Uint8Array> {
  const def = stepRegistry[step.kind];
  const bytes = parts.map((p) => {
    const got = cache.get(p);
    if (got.status !== 'hit') throw new DendrologError(messages.clusterPartUnreadable(p.id, p.key, got.status), 1);
    return unpackEntry(p.codec, placeEntry(got.bytes)).output as Uint8Array;
  });
  const warnings = new WarningLog();
  const ctx = makeContext(step, { warn: (code, message) => warnings.add(code, message), workers });
  const output = await def.parts!.merge(inputs, step.params as never, ctx, bytes);
  return packEntry(def.codec, output, warnings.list());
}
