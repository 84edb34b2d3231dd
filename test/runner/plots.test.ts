/** The report's plots stay light on many rows: scatter plots draw a stated sample. */
import { readFileSync } from 'node:fs';
import { join } from 'node:path';
import { describe, expect, it } from 'vitest';
import { MAX_SCATTER_POINTS } from '../../runner/plots.js';
import { SMALL_RECIPE } from '../helpers.js';
import { expectOutcome, scenario } from '../hostile/harness.js';

/** 26,000 rows of a linear response with 130 sites: 5,200 holdout rows at random. */
function manyRows(): string {
  const lines = ['site,x1,x2,y'];
  for (let r = 0; r < 26_000; r++) {
    const x1 = (r * 7919) % 1000 / 100;
    const x2 = (r * 104729) % 997 / 100;
    lines.push(`S${r % 130},${x1},${x2},${(2 * x1 - x2 + ((r * 31) % 17) / 100).toFixed(4)}`);
  }
  return lines.join('\n') + '\n';
}

describe('scatter plots on many rows', () => {
  it(`draw at most ${MAX_SCATTER_POINTS} points, one row in every k, and say so in the caption`, async () => {
    const recipe = SMALL_RECIPE.replace('groups: site\n', '').replace('folds: {k: 3}', 'holdout: {by: random}\n  folds: {k: 3, by: random}');
    const s = scenario({ 'recipe.yaml': recipe, 'data/obs.csv': manyRows() });
    await expectOutcome(s.dir, ['run', s.recipe, '--cache', s.cache, '--workers', '1'], { code: 0, changes: ['out/small/'] });
    const report = readFileSync(join(s.dir, 'out/small/report.html'), 'utf8');
    for (const id of ['observed-predicted', 'residuals-predicted']) {
      const figure = report.slice(report.indexOf(`<figure class="plot" id="fig-${id}">`), report.indexOf('</figure>', report.indexOf(`id="fig-${id}"`)));
      // 5,200 holdout rows: one in every 3
      // the points' group is hidden from screen readers (the caption describes them): count its circles
      const group = figure.slice(figure.indexOf('<g class="mark-symbol role-mark'), figure.indexOf('</g>', figure.indexOf('<g class="mark-symbol role-mark')));
      expect(group).toContain('aria-hidden="true"');
      expect(group.match(/<path transform=/g)).toHaveLength(1734);
      expect(figure).toContain('1\u2009734 of the 5\u2009200 holdout rows (one in every 3, in holdout order)');
    }
  }, 60_000);
});
