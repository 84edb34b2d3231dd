import { readFileSync } from 'node:fs';
import { join } from 'node:path';
import { describe, expect, it } from 'vitest';
import { silentProgress } from '../../runner/progress.js';
import { runRecipe } from '../../runner/run.js';
import { makeFolder, SMALL_RECIPE, smallData } from '../helpers.js';

/**
 * Replaces what legitimately differs between machines and runs: time, duration, versions, git, and
 * the last digits of long decimals (plot coordinates, gradient stops), which another libm may round
 * differently; every decimal with seven or more places is kept to six significant digits.
 */
function normalise(html: string): string {
  return floats(html)
    .replace(/started \S+, took [\d.]+ s/, 'started TIME, took DURATION s')
    .replace(/<dt>dendrolog<\/dt><dd>[^<]*<\/dd>/, '<dt>dendrolog</dt><dd>VERSION</dd>')
    .replace(/<dt>Node.js<\/dt><dd>[^<]*<\/dd>/, '<dt>Node.js</dt><dd>NODE</dd>')
    .replace(/<dt>Packages<\/dt><dd>[^<]*<\/dd>/, '<dt>Packages</dt><dd>PACKAGES</dd>')
    .replace(/<dt>Git<\/dt><dd>[^<]*<\/dd>/, '<dt>Git</dt><dd>GIT</dd>');
}

/** Long decimals to six significant digits. */
function floats(text: string): string {
  return text.replace(/-?\d+\.\d{7,}/g, (m) => Number(m).toPrecision(6));
}

describe('report snapshot', () => {
  it('renders the small recipe exactly as before, apart from time, versions and git', async () => {
    const dir = makeFolder({
      'recipe.yaml': SMALL_RECIPE.replace('mean: {kind: mean}', 'mean: {kind: mean}\n  tree: {kind: decision_tree, grid: {max_depth: [1, 2], min_leaf: [2, 4]}}'),
      'data/obs.csv': smallData(),
    });
    const { outDir } = await runRecipe(join(dir, 'recipe.yaml'), { cache: join(dir, '.cache'), workers: 1, progress: silentProgress() });
    await expect(normalise(readFileSync(join(outDir, 'report.html'), 'utf8'))).toMatchFileSnapshot('__snapshots__/small-report.html');
    await expect(floats(readFileSync(join(outDir, 'summary.md'), 'utf8')).replace(/dendrolog [\d.]+, Node.js \S+\./, 'VERSIONS.')).toMatchFileSnapshot(
      '__snapshots__/small-summary.md',
    );
  });
});
