import { readFileSync } from 'node:fs';
import { join } from 'node:path';
import { chromium } from 'playwright-core';
import { describe, expect, it } from 'vitest';
import { silentProgress } from '../../runner/progress.js';
import { runRecipe } from '../../runner/run.js';
import { makeFolder } from '../helpers.js';
import { browserAvailable, CHROMIUM, CHROMIUM_ARGS } from './browser.js';

const TITLE = `<script>window.pwned = 1</script> Nitrate & "quotes" 'single' ${'very long title text '.repeat(9)}`;
const COLUMN = `<img src=x onerror="window.pwned=2">&"col"`;
const CATEGORY = `<script>window.pwned=3</script>`;
const GROUP = `<b>site</b>&amp;`;

/** A recipe whose title, column name, category and group values are all trying to become markup. */
function hostileRun() {
  const lines = [`site,"${COLUMN.replace(/"/g, '""')}",kind,y`];
  for (let s = 0; s < 10; s++) {
    for (let r = 0; r < 6; r++) {
      const x = (s * 3 + r * 7) % 10;
      const kind = r % 2 ? CATEGORY : 'plain';
      lines.push(`${s === 0 ? GROUP : `s${s}`},${x},"${kind.replace(/"/g, '""')}",${(2 * x + (kind === 'plain' ? 1 : 0)).toFixed(2)}`);
    }
  }
  const recipe = `dendrolog: 1
name: hostile
title: ${JSON.stringify(TITLE)}
sources:
  obs:
    file: data/obs.csv
    columns: {site: string, ${JSON.stringify(COLUMN)}: number, kind: category, y: number}
features:
  - one_hot: {column: kind}
target: y
predictors: [${JSON.stringify(COLUMN)}, kind]
groups: site
models:
  tree: {kind: decision_tree, grid: {max_depth: [2, 3], min_leaf: 2}}
  linear: {kind: linear}
evaluation:
  folds: {k: 3}
`;
  const dir = makeFolder({ 'recipe.yaml': recipe, 'data/obs.csv': lines.join('\n') + '\n' });
  return runRecipe(join(dir, 'recipe.yaml'), { cache: join(dir, '.cache'), workers: 1, progress: silentProgress() });
}

describe('hostile text in recipes and data', () => {
  it('never reaches the report or summary as markup', async () => {
    const { outDir } = await hostileRun();
    const html = readFileSync(join(outDir, 'report.html'), 'utf8');
    expect(html).not.toMatch(/<script/i);
    expect(html).not.toMatch(/<img/i);
    expect(html).not.toContain('<b>site</b>');
    expect(html).toContain('&lt;script&gt;window.pwned');
    const md = readFileSync(join(outDir, 'summary.md'), 'utf8');
    expect(md).not.toMatch(/<script/i);
  });

  it.runIf(browserAvailable())('shows as text in the DOM of a real browser, running nothing', async () => {
    const { outDir } = await hostileRun();
    const browser = await chromium.launch({ executablePath: CHROMIUM, args: CHROMIUM_ARGS });
    try {
      const page = await browser.newPage({ viewport: { width: 1280, height: 900 } });
      await page.goto(`file://${join(outDir, 'report.html')}`);
      expect(await page.evaluate(() => (window as unknown as { pwned?: number }).pwned)).toBeUndefined();
      expect(await page.locator('script').count()).toBe(0);
      expect(await page.locator('img').count()).toBe(0);
      expect(await page.locator('h1').textContent()).toBe(TITLE);
      const body = (await page.locator('body').textContent()) ?? '';
      expect(body).toContain(COLUMN);
      expect(body).toContain(CATEGORY);
      expect(body).toContain(GROUP);
      expect(await page.evaluate(() => document.documentElement.scrollWidth - window.innerWidth)).toBeLessThanOrEqual(0);
    } finally {
      await browser.close();
    }
  });
});
