/** Words of the report that depend on what the run had: a headline model without explanations. */
import { readFileSync } from 'node:fs';
import { join } from 'node:path';
import { describe, expect, it } from 'vitest';
import { runRecipe } from '../../runner/run.js';
import { silentProgress } from '../../runner/progress.js';
import { makeFolder, SMALL_RECIPE, smallData } from '../helpers.js';

describe('the drivers section', () => {
  it('says the headline model is not explained when it reads no predictor, instead of counting 0 repeats', async () => {
    const dir = makeFolder({ 'recipe.yaml': SMALL_RECIPE.replace('  linear: {kind: linear}\n', ''), 'data/obs.csv': smallData() });
    const { outDir, results } = await runRecipe(join(dir, 'recipe.yaml'), { cache: join(dir, '.cache'), workers: 1, progress: silentProgress() });
    expect(results.chosenModel).toBe('mean');
    const html = readFileSync(join(outDir, 'report.html'), 'utf8');
    const drivers = html.slice(html.indexOf('<section id="drivers">'), html.indexOf('</section>', html.indexOf('<section id="drivers">')));
    expect(drivers).toContain('The headline model, <code>mean</code> (mean), is not explained: it predicts without reading any predictor');
    expect(drivers).not.toContain('repeats');
  });
});
