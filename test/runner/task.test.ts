/** `dendrolog task`, called directly on batch files it should refuse (a cluster task's own errors). */
import { readFileSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import { afterEach, describe, expect, it, vi } from 'vitest';
import type { TaskBatch, TaskFailure } from '../../runner/slurm.js';
import { runTask } from '../../runner/task.js';
import { errorOf, makeFolder } from '../helpers.js';
import { Cache } from '../../runner/cache.js';
import { mergeParts, partKey } from '../../runner/parts.js';
import { messages } from '../../core/messages.js';

afterEach(() => vi.restoreAllMocks());

/** Writes a batch file in a fresh folder; returns its path. */
function batchFile(batch: TaskBatch): string {
  return join(makeFolder({ 'batch.json': JSON.stringify(batch) }), 'batch.json');
}

const failureOf = (file: string, index: number) => JSON.parse(readFileSync(join(file, '..', `task-${index}.error.json`), 'utf8')) as TaskFailure;

describe('a cluster task', () => {
  it('fails, saying so beside its log, when its number is not in the batch', async () => {
    vi.spyOn(process.stderr, 'write').mockImplementation(() => true);
    const file = batchFile({ cache: join(tmpdir(), 'no-cache'), tasks: [] });
    expect(await runTask(file, 3)).toBe(1);
    expect(failureOf(file, 3)).toEqual({ step: 'task 3', message: `task 3 is not in ${file}, which holds 0 tasks`, exitCode: 2 });
  });

  it('refuses parts of a step whose kind does not divide', async () => {
    vi.spyOn(process.stderr, 'write').mockImplementation(() => true);
    const cache = makeFolder({});
    const step = { id: 'holdout', kind: 'holdout', params: {}, locator: {}, key: 'c'.repeat(64), seedKey: 's', seed: 1, codec: 'bytes' as const, inputs: [], part: { first: 0, end: 1, of: 'h' } };
    const file = batchFile({ cache, tasks: [[step]] });
    expect(await runTask(file, 0)).toBe(1);
    expect(failureOf(file, 0)).toEqual({ step: 'holdout', message: 'step holdout is given as parts, but steps of kind holdout do not divide', exitCode: 2 });
  });
});

describe('merging the parts of a divided step', () => {
  it('names the part, its key and that it is not in the cache, and says to run again', async () => {
    const cache = new Cache(makeFolder({}));
    const step = { id: 'fit forest', kind: 'fit', params: {}, locator: {}, key: 'f'.repeat(64), seedKey: 's', seed: 1, inputs: [] };
    const part = { ...step, id: 'fit forest (trees 1-50)', key: partKey(step.key, 0, 1), codec: 'bytes' as const, inputs: [], part: { first: 0, end: 1, of: step.key } };
    const e = await errorOf(() => mergeParts(step, [part], [], cache, 1));
    expect([e.message, e.exitCode]).toEqual([messages.clusterPartUnreadable('fit forest (trees 1-50)', part.key, 'miss'), 1]);
  });
});
