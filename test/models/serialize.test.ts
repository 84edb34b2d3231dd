/**
 * Binary serialization of fitted forests.
 */
import { describe, expect, it } from 'vitest';
import {
  EngineInputError,
  deserializeForest,
  fitDecisionTree,
  fitForest,
  oob,
  predictForest,
  serializeForest,
} from '../../models/forest.js';
import { friedman1 } from '../bench/friedman.js';
import { sameBits } from './forest-helpers.js';

const train = friedman1(600, 'ser-train');
const test = friedman1(500, 'ser-test');

describe('serializeForest / deserializeForest', () => {
  it('round-trips bit for bit: same predictions, same trees, same bytes again', async () => {
    const f = await fitForest(train.x, train.y, { trees: 20, maxDepth: null, minLeaf: 3, mtry: 4, seed: 'ser' });
    const bytes = serializeForest(f);
    const g = deserializeForest(bytes);
    expect(sameBits(predictForest(f, test.x), predictForest(g, test.x))).toBe(true);
    expect(sameBits(serializeForest(g), bytes)).toBe(true);
    for (let t = 0; t < f.trees.length; t++) {
      for (const key of ['feature', 'threshold', 'left', 'right', 'value', 'draws'] as const) {
        expect(sameBits(f.trees[t][key], g.trees[t][key])).toBe(true);
      }
    }
    expect(g.options).toEqual(f.options);
    expect(g.featureNames).toEqual(f.featureNames);
    expect(sameBits(oob(g).predictions, oob(f).predictions)).toBe(true);
    expect(oob(g).r2).toBe(oob(f).r2);
    // a node's draws are its children's together, and the root's are the tree's sample (n draws)
    for (const t of g.trees) {
      expect(t.draws[0]).toBe(train.x.rows);
      for (let i = 0; i < t.feature.length; i++) if (t.feature[i] >= 0) expect(t.draws[t.left[i]] + t.draws[t.right[i]]).toBe(t.draws[i]);
    }
    // 14 bytes per node plus the header and per-row OOB predictions.
    const nodes = f.trees.reduce((s, t) => s + t.feature.length, 0);
    expect(bytes.length).toBeLessThan(nodes * 14 + train.x.rows * 8 + 1024);
  });

  it('keeps a decision tree with its undefined OOB R² and reason', async () => {
    const f = await fitDecisionTree(train.x, train.y, { maxDepth: 4, minLeaf: 5, seed: 's' });
    const g = deserializeForest(serializeForest(f));
    expect(g.kind).toBe('decision_tree');
    expect(oob(g).r2).toBeNull();
    expect(oob(g).reason).toBe(oob(f).reason);
  });

  it('rejects bytes that are not a forest, truncated, or of another version', async () => {
    const f = await fitForest(train.x, train.y, { trees: 2, maxDepth: 3, minLeaf: 5, mtry: 3, seed: 's' });
    const bytes = serializeForest(f);
    expect(() => deserializeForest(new TextEncoder().encode('hello, this is not a forest'))).toThrow(EngineInputError);
    expect(() => deserializeForest(bytes.subarray(0, bytes.length - 3))).toThrow(/ends early|incomplete/);
    const other = bytes.slice();
    other[8] = 99;
    expect(() => deserializeForest(other)).toThrow(/format version 99/);
    const header = new TextEncoder().encode('{"kind":"random_forest"}');
    const noFields = new Uint8Array(16 + header.length);
    noFields.set(bytes.subarray(0, 12));
    new DataView(noFields.buffer).setUint32(12, header.length, true);
    noFields.set(header, 16);
    expect(() => deserializeForest(noFields)).toThrow(/header lacks/);
  });
});
