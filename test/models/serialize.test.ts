/**
 * Binary serialization of fitted forests.
 */
import { describe, expect, it } from 'vitest';
import {
  EngineInputError,
  deserializeForest,
  engineMessages,
  fitDecisionTree,
  fitForest,
  oob,
  predictForest,
  serializeForest,
} from '../../models/forest.js';
import { readFileSync } from 'node:fs';
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
      for (const key of ['feature', 'thresholdOrValue', 'right', 'draws'] as const) {
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
      for (let i = 0; i < t.feature.length; i++) if (t.feature[i] >= 0) expect(t.draws[i + 1] + t.draws[t.right[i]]).toBe(t.draws[i]);
    }
    // 16 bytes per node plus the header and per-row OOB predictions.
    const nodes = f.trees.reduce((s, t) => s + t.feature.length, 0);
    expect(bytes.length).toBeLessThan(nodes * 16 + train.x.rows * 8 + 1024);
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

  it('reads the trees as views of the bytes, and bytes at any offset alike', async () => {
    const f = await fitForest(train.x, train.y, { trees: 4, maxDepth: null, minLeaf: 3, mtry: 4, seed: 'views' });
    const bytes = serializeForest(f);
    const g = deserializeForest(bytes);
    for (const t of g.trees) {
      expect(t.thresholdOrValue.buffer).toBe(bytes.buffer);
      expect(t.feature.buffer).toBe(bytes.buffer);
    }
    // one byte in: the arrays cannot be views there, so the bytes are copied once, and read the same
    const shifted = new Uint8Array(bytes.length + 1);
    shifted.set(bytes, 1);
    const h = deserializeForest(shifted.subarray(1));
    expect(h.trees[0].feature.buffer).not.toBe(shifted.buffer);
    expect(sameBits(predictForest(h, test.x), predictForest(f, test.x))).toBe(true);
  });

  it('reads a forest written in format version 2, predicting as it did when written', () => {
    // test/models/fixtures/forest-v2.bin was written by the engine before format 3 (commit ed2cda8):
    //   fitForest(friedman1(120, 'forest-v2-fixture'), {trees: 3, maxDepth: null, minLeaf: 3, mtry: 4, seed: 'v2'})
    // and these are its predictions of friedman1(10, 'forest-v2-fixture-test') printed then.
    const expected = [
      19.324375614996793, 14.371200140064452, 15.917635392953445, 11.246809257885133, 15.069448849034146, 12.78464349170521,
      12.90735165476397, 23.77891012860535, 15.539730540349254, 12.025443692317618,
    ];
    const old = new Uint8Array(readFileSync(new URL('./fixtures/forest-v2.bin', import.meta.url)));
    expect(new DataView(old.buffer).getUint32(8, true)).toBe(2);
    const g = deserializeForest(old);
    expect(Array.from(predictForest(g, friedman1(10, 'forest-v2-fixture-test').x))).toEqual(expected);
    // written again, it is the current format and predicts the same
    const again = serializeForest(g);
    expect(new DataView(again.buffer).getUint32(8, true)).toBe(3);
    expect(Array.from(predictForest(deserializeForest(again), friedman1(10, 'forest-v2-fixture-test').x))).toEqual(expected);
    const width = old.slice();
    const at = new TextDecoder().decode(width).indexOf('"featureWidth":2');
    width[at + '"featureWidth":'.length] = '3'.charCodeAt(0);
    expect(() => deserializeForest(width)).toThrow(/unknown feature index width/);
  });

  it('names what is wrong with a tree: a feature out of range, negative draws, a broken preorder', async () => {
    const f = await fitForest(train.x, train.y, { trees: 1, maxDepth: 2, minLeaf: 5, mtry: 3, seed: 's' });
    const bytes = serializeForest(f);
    const c = f.trees[0].feature.length;
    // the tree is last: its thresholds and values, features and draws end the bytes
    const features = bytes.length - 8 * c;
    const draws = bytes.length - 4 * c;
    const broken = (edit: (v: DataView) => void): Uint8Array => {
      const b = bytes.slice();
      edit(new DataView(b.buffer));
      return b;
    };
    expect(f.trees[0].feature[0]).toBeGreaterThanOrEqual(0);
    expect(() => deserializeForest(broken((v) => v.setInt32(features, 10, true)))).toThrow(engineMessages.notAForest('tree 0 node 0 splits on feature 10 of 10'));
    expect(() => deserializeForest(broken((v) => v.setUint32(draws + 4, 2 ** 31, true)))).toThrow(engineMessages.notAForest('tree 0 node 1 has 2147483648 draws'));
    // the root a leaf: the nodes after it belong to no tree
    expect(() => deserializeForest(broken((v) => v.setInt32(features, -1, true)))).toThrow(engineMessages.notAForest('tree 0 has nodes after its last leaf'));
    // the last leaf made a split: its children are missing
    expect(() => deserializeForest(broken((v) => v.setInt32(features + 4 * (c - 1), 0, true)))).toThrow(engineMessages.notAForest('tree 0 is incomplete'));
  });
});
