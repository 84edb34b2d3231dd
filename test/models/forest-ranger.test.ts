/**
 * Test R² of dendrolog's forest on Friedman #1 against R's ranger on the same rows and settings.
 * Source of the reference numbers: ranger 0.14.1 (Wright & Ziegler 2017, J. Stat. Softw. 77(1)),
 * run by test/models/fixtures/ranger-reference.R on the committed fixture CSVs; the command and
 * versions are in ranger-reference.json. Both libraries are random, so both sides average two seeds.
 */
import { readFileSync } from 'node:fs';
import { describe, expect, it } from 'vitest';
import { fitForest, predictForest, type ForestOptions } from '../../models/forest.js';
import { r2 } from '../../models/metrics.js';
import { readXyCsv } from './forest-helpers.js';

interface Reference {
  settings: Record<string, { r2_mean: number }>;
}
const reference = JSON.parse(readFileSync(new URL('./fixtures/ranger-reference.json', import.meta.url), 'utf8')) as Reference;
const train = readXyCsv('friedman1-train.csv');
const test = readXyCsv('friedman1-test.csv');

async function meanTestR2(opts: Omit<ForestOptions, 'seed'>): Promise<number> {
  let sum = 0;
  for (const seed of ['1', '2']) {
    const forest = await fitForest(train.x, train.y, { ...opts, seed });
    sum += r2(test.y, predictForest(forest, test.x)).value ?? NaN;
  }
  return sum / 2;
}

// Each dendrolog setting below follows the same rule as the ranger setting of that name:
// ranger's min.node.size = 1 splits every node of 2+ samples, as dendrolog's min_leaf = 1 does;
// max.depth = 4 and dendrolog's maxDepth = 4 both allow 4 levels of splits below the root;
// ranger's default min.node.size = 5 (nodes of 5 or fewer samples stay leaves) is min_leaf 1, min_split 6.
const sameRule: [string, Omit<ForestOptions, 'seed'>][] = [
  ['mtry3-node1-300', { trees: 300, mtry: 3, minLeaf: 1, maxDepth: null }],
  ['mtry5-node1-300', { trees: 300, mtry: 5, minLeaf: 1, maxDepth: null }],
  ['mtry10-node1-100', { trees: 100, mtry: 10, minLeaf: 1, maxDepth: null }],
  ['mtry3-node1-depth4-300', { trees: 300, mtry: 3, minLeaf: 1, maxDepth: 4 }],
  ['mtry3-node1-noreplace632-300', { trees: 300, mtry: 3, minLeaf: 1, maxDepth: null, replace: false, sampleFraction: 0.632 }],
  ['defaults-100', { trees: 100, mtry: 3, minLeaf: 1, minSplit: 6, maxDepth: null }],
];

describe('forest test R² on Friedman #1 against ranger', () => {
  for (const [name, opts] of sameRule) {
    it(`is within 0.01 of ranger's for ${name}`, async () => {
      const ours = await meanTestR2(opts);
      expect(Math.abs(ours - reference.settings[name].r2_mean)).toBeLessThan(0.01);
    });
  }

  it("stays close to ranger's defaults with dendrolog's defaults, a little lower because its leaves are larger", async () => {
    // ranger's min.node.size = 5 is the smallest node it still splits (leaves of 1..5 samples);
    // dendrolog's min_leaf = 5 keeps at least 5 in every leaf, so its trees are shallower.
    const ours = await meanTestR2({ trees: 100, mtry: 3, minLeaf: 5, maxDepth: null });
    const theirs = reference.settings['defaults-100'].r2_mean;
    expect(ours).toBeGreaterThan(theirs - 0.02);
    expect(ours).toBeLessThan(theirs + 0.01);
  });
});
