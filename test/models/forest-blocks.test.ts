/**
 * A forest grown in blocks of trees (growForestBlocks, as separate cluster tasks would) and put
 * together with assembleForest is the forest fitForest grows whole, bit for bit. Data: Friedman's
 * (1991) benchmark function #1 (test/bench/friedman.ts).
 */
import { describe, expect, it } from 'vitest';
import {
  EngineInputError,
  MIN_DRAWS_FOR_THREADS,
  TREE_BLOCK,
  assembleForest,
  deserializeBlocks,
  engineMessages,
  fitForest,
  growForestBlocks,
  serializeBlocks,
  serializeForest,
  treeBlocks,
  type ForestOptions,
} from '../../models/forest.js';
import { friedman1 } from '../bench/friedman.js';
import { sameBits } from './forest-helpers.js';

const train = friedman1(400, 'blocks-train');
// 2.4 blocks: the last block is short
const opts: ForestOptions = { trees: 2 * TREE_BLOCK + 20, maxDepth: null, minLeaf: 3, mtry: 4, seed: 'blocks' };

/** The engine error a call throws, or null. */
async function engineError(call: () => unknown): Promise<string | null> {
  try {
    await call();
    return null;
  } catch (e) {
    if (e instanceof EngineInputError) return e.message;
    throw e;
  }
}

describe('a forest grown in blocks of trees', () => {
  it('counts blocks of TREE_BLOCK trees, the last one possibly short', () => {
    expect(treeBlocks(1)).toBe(1);
    expect(treeBlocks(TREE_BLOCK)).toBe(1);
    expect(treeBlocks(TREE_BLOCK + 1)).toBe(2);
    expect(treeBlocks(opts.trees)).toBe(3);
  });

  it('assembles to the bytes of the whole fit, however the blocks are split between tasks', async () => {
    const whole = serializeForest(await fitForest(train.x, train.y, opts));
    for (const split of [[0, 3], [0, 1, 3], [0, 2, 3], [0, 1, 2, 3]]) {
      const blocks = [];
      for (let k = 0; k + 1 < split.length; k++) blocks.push(...(await growForestBlocks(train.x, train.y, opts, split[k], split[k + 1])));
      expect(blocks.map((b) => b.trees.length)).toEqual([TREE_BLOCK, TREE_BLOCK, 20]);
      expect(sameBits(serializeForest(assembleForest(train.x, train.y, opts, blocks)), whole), `split at ${split.join(', ')}`).toBe(true);
    }
  });

  it('round-trips blocks through bytes bit for bit', async () => {
    const blocks = await growForestBlocks(train.x, train.y, opts, 1, 3);
    const bytes = serializeBlocks(blocks, train.x.rows, train.x.columns.length);
    const back = deserializeBlocks(bytes);
    expect(back.map((b) => b.index)).toEqual([1, 2]);
    expect(sameBits(serializeBlocks(back, train.x.rows, train.x.columns.length), bytes)).toBe(true);
    const first = await growForestBlocks(train.x, train.y, opts, 0, 1);
    const whole = serializeForest(await fitForest(train.x, train.y, opts));
    expect(sameBits(serializeForest(assembleForest(train.x, train.y, opts, [...first, ...back])), whole)).toBe(true);
  });

  it('matches the whole fit on two threads, with the blocks grown on one', async () => {
    // large enough that the whole fit really uses two threads
    const big = friedman1(6000, 'blocks-threads');
    const o = { ...opts, trees: Math.ceil(MIN_DRAWS_FOR_THREADS / big.x.rows) + 3 };
    const whole = serializeForest(await fitForest(big.x, big.y, { ...o, workers: 2 }));
    const blocks = [...(await growForestBlocks(big.x, big.y, o, 0, 2)), ...(await growForestBlocks(big.x, big.y, o, 2, treeBlocks(o.trees)))];
    expect(sameBits(serializeForest(assembleForest(big.x, big.y, o, blocks)), whole)).toBe(true);
  });

  it('matches the whole fit on a target scaled beyond 2^400 (grown scaled, put back once)', async () => {
    const y = train.y.map((v) => v * 2 ** 1000);
    const whole = serializeForest(await fitForest(train.x, y, opts));
    const blocks = [...(await growForestBlocks(train.x, y, opts, 0, 1)), ...(await growForestBlocks(train.x, y, opts, 1, 3))];
    expect(sameBits(serializeForest(assembleForest(train.x, y, opts, blocks)), whole)).toBe(true);
  });

  it('refuses a block range outside the forest', async () => {
    expect(await engineError(() => growForestBlocks(train.x, train.y, opts, 2, 4))).toBe(engineMessages.blockRange(2, 4, 3));
    expect(await engineError(() => growForestBlocks(train.x, train.y, opts, 1, 1))).toBe(engineMessages.blockRange(1, 1, 3));
  });

  it('refuses blocks out of order, missing, or grown on other data', async () => {
    const all = await growForestBlocks(train.x, train.y, opts, 0, 3);
    expect(await engineError(() => assembleForest(train.x, train.y, opts, [all[1], all[0], all[2]]))).toBe(engineMessages.blockOrder(1, 0));
    expect(await engineError(() => assembleForest(train.x, train.y, opts, [all[0], all[1]]))).toBe(engineMessages.blocksMissing(2 * TREE_BLOCK, opts.trees));
    const other = friedman1(300, 'blocks-other');
    const foreign = await growForestBlocks(other.x, other.y, opts, 2, 3);
    expect(await engineError(() => assembleForest(train.x, train.y, opts, [all[0], all[1], foreign[0]]))).toBe(engineMessages.blockShape(2, 20, 20, 300, 400));
  });

  it('refuses bytes that are not blocks, naming what is wrong', async () => {
    const bytes = serializeBlocks(await growForestBlocks(train.x, train.y, opts, 2, 3), train.x.rows, train.x.columns.length);
    expect(await engineError(() => deserializeBlocks(bytes.subarray(0, bytes.length - 3)))).toBe(engineMessages.notBlocks('it ends early (truncated?)'));
    const wrong = bytes.slice();
    wrong[0] = 0;
    expect(await engineError(() => deserializeBlocks(wrong))).toBe(engineMessages.notBlocks('the magic header is missing'));
    expect(await engineError(() => deserializeBlocks(new Uint8Array([...bytes, 0])))).toBe(engineMessages.notBlocks('1 unexpected bytes after the last block'));
  });
});
