/** What random draws follow: the analysis, not everything else in the run. */
import { readFileSync } from 'node:fs';
import { join } from 'node:path';
import { describe, expect, it } from 'vitest';
import { SMALL_RECIPE } from '../helpers.js';
import { cli, scenario } from '../hostile/harness.js';

const manifest = (dir: string) => JSON.parse(readFileSync(join(dir, 'manifest.json'), 'utf8')) as { steps: { id: string; output: string }[] };
const outputOf = (dir: string, id: string) => manifest(dir).steps.find((s) => s.id === id)?.output;

describe('the final fit, its score and its explanation', () => {
  it('are bit-identical when the grid gains a value that is not chosen', async () => {
    const recipe = (leaves: string) => SMALL_RECIPE.replace('mean: {kind: mean}', `mean: {kind: mean}\n  forest: {kind: random_forest, grid: {trees: 60, min_leaf: ${leaves}}}`);
    const s = scenario({ 'recipe.yaml': recipe('[2]'), 'wide.yaml': recipe('[2, 12]') });
    const one = await cli(['run', s.recipe, '--no-cache', '--out', join(s.dir, 'one')]);
    const two = await cli(['run', join(s.dir, 'wide.yaml'), '--no-cache', '--out', join(s.dir, 'two')]);
    expect([one.code, two.code], one.err + two.err).toEqual([0, 0]);
    // about 30 rows to fit in each fold: min_leaf 12 allows one split, so cross-validation keeps min_leaf 2
    expect(outputOf(join(s.dir, 'two'), 'choose forest')).not.toBe(outputOf(join(s.dir, 'one'), 'choose forest'));
    for (const id of ['fit forest', 'score forest', 'explain forest']) {
      expect(outputOf(join(s.dir, 'two'), id), id).toBe(outputOf(join(s.dir, 'one'), id));
    }
  });
});
