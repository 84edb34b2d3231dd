/**
 * Limits that keep a hostile or careless input from hanging a run or flooding a screen: the width
 * of a one-hot expansion, the length of lists in messages, and the length of data texts shown in
 * the report and kept in the run record.
 */
import { readFileSync } from 'node:fs';
import { join } from 'node:path';
import { describe, expect, it } from 'vitest';
import { LIST_LIMIT, listed, messages } from '../../core/messages.js';
import { displayOf } from '../../runner/recipe.js';
import { TEXT_LIMIT } from '../../runner/shorten.js';
import { SMALL_RECIPE, smallData } from '../helpers.js';

const SMALL_DATA = smallData();
import { expectOutcome, lineColOf, scenario } from './harness.js';

/** SMALL_RECIPE's data with a category column `code` holding `levels` distinct values (one per row, cycling). */
function withCodes(levels: number, rows = Math.max(levels, 60)): string {
  const lines = ['site,x1,x2,code,y'];
  for (let i = 0; i < rows; i++) {
    const x1 = (i * 7) % 11;
    const x2 = (i * 5) % 13;
    lines.push(`S${i % 12},${x1},${x2},c${i % levels},${(2 * x1 - x2).toFixed(2)}`);
  }
  return lines.join('\n') + '\n';
}

const ONE_HOT = SMALL_RECIPE.replace('columns: {site: string, x1: number, x2: number, y: number}', 'columns: {site: string, x1: number, x2: number, code: category, y: number}')
  .replace('target: y', 'features:\n  - one_hot: {column: code, unseen: other}\ntarget: y')
  .replace('predictors: [x1, x2]', 'predictors: [x1, x2, code]')
  .replace('  linear: {kind: linear}\n', '');

describe('limits with messages', () => {
  it('stops a one_hot expansion wider than max_levels, naming the column and both counts', async () => {
    const s = scenario({ 'recipe.yaml': ONE_HOT, 'data/obs.csv': withCodes(1500) });
    // each fold learns the levels of its own training rows; the first fold to see too many stops the run
    await expectOutcome(s.dir, ['run', s.recipe, '--cache', s.cache, '--workers', '1'], {
      code: 1,
      err: /one_hot on "code" would make 1,\d{3} indicator columns, one per category in the training rows, more than max_levels \(1,000\)/,
    });
  });

  it('lets a recipe raise max_levels when it means it', async () => {
    const text = ONE_HOT.replace('one_hot: {column: code, unseen: other}', 'one_hot: {column: code, unseen: other, max_levels: 2000}');
    const s = scenario({ 'recipe.yaml': text, 'data/obs.csv': withCodes(1100, 1200) });
    await expectOutcome(s.dir, ['run', s.recipe, '--cache', s.cache, '--workers', '1'], { code: 0, changes: ['out/small/'] });
  });

  it('refuses max_levels below 1 at its position', async () => {
    const text = ONE_HOT.replace('one_hot: {column: code, unseen: other}', 'one_hot: {column: code, unseen: other, max_levels: 0}');
    const s = scenario({ 'recipe.yaml': text, 'data/obs.csv': withCodes(5) });
    const r = await expectOutcome(s.dir, ['check', s.recipe], { code: 2 });
    expect(r.err).toContain(`${displayOf(s.recipe)}:${lineColOf(text, '0}')}:`);
  });

  it('lists at most 20 undeclared columns of a very wide file, then how many more', async () => {
    const extra = Array.from({ length: 5000 }, (_, i) => `extra_${i}`);
    const csv = ['site,x1,x2,y,' + extra.join(','), ...Array.from({ length: 60 }, (_, i) => `S${i % 12},${i % 7},${i % 5},${i},` + extra.map(() => '1').join(','))].join('\n') + '\n';
    const text = SMALL_RECIPE.replace('    columns: {site', '    undeclared: error\n    columns: {site');
    const s = scenario({ 'recipe.yaml': text, 'data/obs.csv': csv });
    const r = await expectOutcome(s.dir, ['run', s.recipe, '--cache', s.cache, '--workers', '1'], {
      code: 1,
      err: messages.undeclaredColumns(displayOf(join(s.dir, 'data/obs.csv')), extra),
    });
    expect(r.err).toContain(`extra_19, … and 4,980 more;`);
    expect(r.err).not.toContain('extra_20,');
    expect(r.err.length).toBeLessThan(1000);
  });

  it('prints the first 20 recipe problems and counts the rest', async () => {
    const bad = Array.from({ length: 30 }, (_, i) => `  m${i}: {kind: linear, grid: {trees: 3}}`).join('\n');
    const text = SMALL_RECIPE.replace('  mean: {kind: mean}', '  mean: {kind: mean}\n' + bad);
    const s = scenario({ 'recipe.yaml': text });
    const r = await expectOutcome(s.dir, ['check', s.recipe], { code: 2 });
    const lines = r.err.trimEnd().split('\n');
    expect(lines).toHaveLength(LIST_LIMIT + 1);
    expect(lines[LIST_LIMIT]).toMatch(/^… and \d+ more problems$/);
  });

  it('shortens a category of a million characters in messages', () => {
    const huge = 'x'.repeat(1_000_000);
    const m = messages.unseenCategory('code', huge, Array.from({ length: 10_000 }, (_, i) => `c${i}`));
    expect(m.length).toBeLessThan(1000);
    expect(m).toContain('(999,802 more characters)');
    expect(m).toContain('c19, … and 9,980 more');
  });

  it('lists short lists whole', () => {
    expect(listed(['a', 'b', 'c'])).toBe('a, b, c');
    expect(listed(Array.from({ length: LIST_LIMIT }, (_, i) => String(i)))).not.toContain('more');
  });

  it('shortens a data text of 5,000 characters in the report and the run record, keeping the run whole', async () => {
    const long = 'L'.repeat(5000);
    const lines = ['site,x1,x2,y'];
    for (let i = 0; i < 60; i++) lines.push(`${i % 12 === 0 ? long : `S${i % 12}`},${i % 7},${(i * 3) % 5},${(2 * (i % 7) - ((i * 3) % 5)).toFixed(2)}`);
    const s = scenario({ 'data/obs.csv': lines.join('\n') + '\n' });
    await expectOutcome(s.dir, ['run', s.recipe, '--cache', s.cache, '--workers', '1'], { code: 0, changes: ['out/small/'] });
    const report = readFileSync(join(s.dir, 'out/small/report.html'), 'utf8');
    const record = readFileSync(join(s.dir, 'out/small/run-record.json'), 'utf8');
    for (const text of [report, record]) {
      expect(text).not.toContain('L'.repeat(TEXT_LIMIT + 1));
    }
  });
});

describe('settings that cannot work with the data', () => {
  it('refuse a within step whose min is above its max, at the min', async () => {
    const text = SMALL_RECIPE.replace('target: y', 'clean:\n  - within: {column: x1, min: 5, max: 1}\ntarget: y');
    const s = scenario({ 'recipe.yaml': text });
    await expectOutcome(s.dir, ['check', s.recipe], {
      code: 2,
      err: `${displayOf(s.recipe)}:${lineColOf(text, '5, max')}: ${messages.withinInverted('clean[0] (within)', 5, 1)}`,
    });
  });

  it('stop forward time folds whose gap leaves a fold no training rows, naming the gap', async () => {
    const lines = ['site,x1,x2,day,y'];
    for (let i = 0; i < 60; i++) lines.push(`S${i % 12},${i % 7},${(i * 3) % 5},2020-01-${String(1 + (i % 28)).padStart(2, '0')},${(2 * (i % 7) - ((i * 3) % 5)).toFixed(2)}`);
    const text = SMALL_RECIPE.replace('columns: {site: string, x1: number, x2: number, y: number}', 'columns: {site: string, x1: number, x2: number, day: date, y: number}')
      .replace('groups: site', 'groups: site\ntime: day')
      .replace('folds: {k: 3}', 'folds: {k: 3, by: time, gap: 1000}');
    const s = scenario({ 'recipe.yaml': text, 'data/obs.csv': lines.join('\n') + '\n' });
    await expectOutcome(s.dir, ['run', s.recipe, '--cache', s.cache, '--workers', '1'], { code: 1, err: messages.timeGapTooLarge(1000, 'days', 1) });
  });
});

describe('a groups column with gaps', () => {
  it('stops the run and says how to drop the rows, instead of making one group of them', async () => {
    const data = SMALL_DATA.replace(/^S1,/gm, ',');
    const s = scenario({ 'data/obs.csv': data });
    await expectOutcome(s.dir, ['run', s.recipe, '--cache', s.cache, '--workers', '1'], { code: 1, err: messages.groupsMissing('site', 5) });
  });
});

describe('control characters in the title', () => {
  for (const [label, yaml, code] of [['ESC', '\\e[31mred', 0x1b], ['NUL', 'a\\0b', 0], ['BEL', 'ring\\a', 7]] as const) {
    it(`refuse ${label} at the title`, async () => {
      const text = SMALL_RECIPE.replace('name: small\n', `name: small\ntitle: "${yaml}"\n`);
      const s = scenario({ 'recipe.yaml': text });
      await expectOutcome(s.dir, ['check', s.recipe], {
        code: 2,
        err: `${displayOf(s.recipe)}:${lineColOf(text, `"${yaml}"`)}: ${messages.controlCharacter('title', code)}`,
      });
    });
  }

  it('accept a tab', async () => {
    const s = scenario({ 'recipe.yaml': SMALL_RECIPE.replace('name: small\n', 'name: small\ntitle: "a\\tb"\n') });
    await expectOutcome(s.dir, ['check', s.recipe], { code: 0 });
  });
});

describe('a holdout that leaves too little to fold', () => {
  it('says how much the holdout took and which setting to change', async () => {
    const text = SMALL_RECIPE.replace('  folds: {k: 3}', '  holdout: {by: random, fraction: 0.95}\n  folds: {k: 3, by: random}');
    const s = scenario({ 'recipe.yaml': text });
    await expectOutcome(s.dir, ['run', s.recipe, '--cache', s.cache, '--workers', '1'], {
      code: 1,
      err: /^only \d training rows remain after the holdout took \d+ of 60, but 3 folds need at least 6; lower evaluation\.holdout\.fraction/,
    });
  });

  it('counts groups when the folds are grouped', async () => {
    const text = SMALL_RECIPE.replace('  folds: {k: 3}', '  holdout: {fraction: 0.8}\n  folds: {k: 3}');
    const s = scenario({ 'recipe.yaml': text });
    await expectOutcome(s.dir, ['run', s.recipe, '--cache', s.cache, '--workers', '1'], {
      code: 1,
      err: /^only [0-2] training groups remain after the holdout took \d+ of 12, but 3 folds need at least 3;/,
    });
  });
});
