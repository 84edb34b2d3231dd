/** What random draws follow: the analysis, not everything else in the run. */
import { readFileSync } from 'node:fs';
import { join } from 'node:path';
import { describe, expect, it } from 'vitest';
import { SMALL_RECIPE, smallData } from '../helpers.js';
import { cli, scenario } from '../hostile/harness.js';

const manifest = (dir: string) => JSON.parse(readFileSync(join(dir, 'run-record.json'), 'utf8')) as { steps: { id: string; output: string }[] };
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

describe('every random draw of a run', () => {
  it('follows the parsed data: line endings and column order of the file change no output from the model table on', async () => {
    const lf = smallData();
    const lines = lf.trimEnd().split('\n');
    // columns in another order: site,x1,x2,y becomes y,x2,site,x1
    const swapped = lines.map((l) => {
      const [site, x1, x2, y] = l.split(',');
      return [y, x2, site, x1].join(',');
    });
    const s = scenario({ 'crlf/data/obs.csv': lines.join('\r\n') + '\r\n', 'crlf/recipe.yaml': SMALL_RECIPE, 'swapped/data/obs.csv': swapped.join('\n') + '\n', 'swapped/recipe.yaml': SMALL_RECIPE });
    const runs = ['.', 'crlf', 'swapped'].map((d) => join(s.dir, d));
    for (const d of runs) expect((await cli(['run', join(d, 'recipe.yaml'), '--no-cache', '--out', join(d, 'out')])).code).toBe(0);
    const fromModelTable = (d: string) => {
      const steps = manifest(join(d, 'out')).steps;
      return steps.slice(steps.findIndex((x) => x.id === 'model table')).map((x) => [x.id, x.output]);
    };
    expect(fromModelTable(runs[1])).toEqual(fromModelTable(runs[0]));
    expect(fromModelTable(runs[2])).toEqual(fromModelTable(runs[0]));
  });
});
