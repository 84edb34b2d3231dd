/**
 * Forest prediction spread over threads gives every row the prediction one thread gives it, bit for
 * bit: a row is predicted whole by one thread, in tree order.
 */
import { describe, expect, it } from 'vitest';
import { fitForest, predictForest, serializeForest } from '../../models/forest.js';
import { MIN_PREDICT_WORK_FOR_THREADS, PREDICT_CHUNK_ROWS, predictOnThreads } from '../../models/predict-pool.js';
import { friedman1 } from '../bench/friedman.js';

describe('forest prediction on threads', () => {
  it('equals prediction on one thread, above the work that starts a worker, with the bytes shared or not', async () => {
    const train = friedman1(500, 'predict-pool-train');
    const forest = await fitForest(train.x, train.y, { trees: 500, maxDepth: 4, minLeaf: 5, mtry: 3, seed: 'predict-pool' });
    // more chunks than threads, the last one short
    const rows = 3 * PREDICT_CHUNK_ROWS + 77;
    const { x } = friedman1(rows, 'predict-pool-rows');
    expect(rows * 500).toBeGreaterThanOrEqual(MIN_PREDICT_WORK_FOR_THREADS);
    const one = Array.from(predictForest(forest, x));
    const bytes = serializeForest(forest);
    expect(Array.from(await predictOnThreads(forest, bytes, x, 2))).toEqual(one);
    // as a large step output holds it (core/codec.ts placeEntry)
    const shared = new Uint8Array(new SharedArrayBuffer(bytes.length));
    shared.set(bytes);
    const got = await predictOnThreads(forest, shared, x, 3);
    expect(got.buffer).not.toBeInstanceOf(SharedArrayBuffer);
    expect(Array.from(got)).toEqual(one);
  }, 60_000);

  it('says a worker failed, and why, instead of returning what the other threads predicted', async () => {
    const train = friedman1(300, 'predict-pool-fail');
    const forest = await fitForest(train.x, train.y, { trees: 500, maxDepth: 3, minLeaf: 5, mtry: 3, seed: 'predict-pool' });
    const { x } = friedman1(3 * PREDICT_CHUNK_ROWS + 1, 'predict-pool-fail-rows');
    // the worker reads the forest from bytes that are not one
    await expect(predictOnThreads(forest, new TextEncoder().encode('not a forest at all'), x, 2)).rejects.toThrow(
      /prediction failed in a worker thread: EngineInputError: these bytes are not a dendrolog forest/,
    );
  }, 60_000);
});
