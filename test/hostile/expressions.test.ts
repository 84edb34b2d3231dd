/**
 * Recipe expressions (derive columns, keep_rows conditions) are row-wise, bounded in time and size,
 * and fail with messages that name the step and the expression.
 */
import { join } from 'node:path';
import { afterEach, beforeEach, describe, expect, it } from 'vitest';
import { expectOutcome, lineColOf, scenario } from './harness.js';
import { messages } from '../../core/messages.js';
import { displayOf } from '../../runner/recipe.js';
import { EXPRESSION_BUDGET_VARIABLE, MAX_TEXT_VALUE_CHARS } from '../../steps/expressions.js';
import type { Frame } from '../../core/frame.js';
import type { FrameOutput } from '../../core/step-types.js';
import { keepRows } from '../../steps/keep-rows.js';
import { derive } from '../../steps/derive.js';
import { asOutput, SMALL_RECIPE, smallData, stepContext } from '../helpers.js';

/** SMALL_RECIPE with clean and features sections appended. */
const recipeWith = (sections: string): string => SMALL_RECIPE + sections;
const check = (s: { recipe: string }) => ['check', s.recipe];
const run = (s: { recipe: string; cache: string }) => ['run', s.recipe, '--cache', s.cache, '--workers', '1'];
/** smallData with site S0 renamed to a string that makes /(a+)+$/ backtrack for ever. */
const HOSTILE_SITE = 'a'.repeat(40) + 'c';
const hostileData = (): string => smallData().replace(/^S0,/gm, `${HOSTILE_SITE},`);
/** A pattern that takes exponential time on HOSTILE_SITE and none on the usual sites. */
const CATASTROPHIC = 'op.match(d.site, /(a+)+$/)';

describe('aggregate and window functions are refused at check, at the call', () => {
  const cases: [string, string, string, string, 'aggregate' | 'window'][] = [
    // [section, expression, the call check points at, function, family]
    ['derive', 'd.x1 - op.mean(d.x1)', 'op.mean', 'mean', 'aggregate'],
    ['derive', 'd.x1 / op.sum(d.x1)', 'op.sum', 'sum', 'aggregate'],
    ['derive', 'op.lag(d.x1, 1)', 'op.lag', 'lag', 'window'],
    ['derive', 'op.abs(op.mean(d.x2))', 'op.mean', 'mean', 'aggregate'],
    ['derive', 'd.x1 > op.quantile(d.x1, 0.9) ? 1 : 0', 'op.quantile', 'quantile', 'aggregate'],
    ['keep_rows', 'd.x1 > op.median(d.x1)', 'op.median', 'median', 'aggregate'],
    ['keep_rows', 'op.row_number() <= 40', 'op.row_number', 'row_number', 'window'],
    ['keep_rows', 'd.x2 >= 0 && op.count() > 10', 'op.count', 'count', 'aggregate'],
    ['keep_rows', 'op.rank() > 3', 'op.rank', 'rank', 'window'],
  ];
  for (const [section, expr, call, fn, family] of cases) {
    it(`${section} "${expr}" names op.${fn} as ${family === 'aggregate' ? 'an' : 'a'} ${family} function`, async () => {
      const text = recipeWith(section === 'derive' ? `features:\n  - derive: {x3: "${expr}"}\n` : `clean:\n  - keep_rows: "${expr}"\n`);
      const s = scenario({ 'recipe.yaml': text });
      await expectOutcome(s.dir, check(s), {
        code: 2,
        err: `${displayOf(s.recipe)}:${lineColOf(text, call)}: ${messages.expressionWholeTable(expr, fn, family)}`,
      });
    });
  }

  it('finds a bare aggregate name and the second of two identical calls, in a block scalar', async () => {
    const text = recipeWith('features:\n  - derive:\n      x3: >-\n        op.abs(d.x1) +\n        stdev(d.x2)\n      x4: "op.abs(d.x1) + op.abs(d.x1)"\n');
    const s = scenario({ 'recipe.yaml': text });
    const r = await expectOutcome(s.dir, check(s), { code: 2, err: `${displayOf(s.recipe)}:${lineColOf(text, 'stdev(')}: ` });
    expect(r.err).toContain(messages.expressionWholeTable('op.abs(d.x1) + stdev(d.x2)', 'stdev', 'aggregate'));
    expect(r.err).not.toContain('x4');
  });

  it('run refuses the recipe too, before writing anything', async () => {
    const text = recipeWith('features:\n  - derive: {x3: "d.x1 - op.mean(d.x1)"}\n');
    const s = scenario({ 'recipe.yaml': text });
    await expectOutcome(s.dir, run(s), { code: 2, err: messages.expressionWholeTable('d.x1 - op.mean(d.x1)', 'mean', 'aggregate') });
  });

  it('accepts row-wise expressions, regular expressions included', async () => {
    const text = recipeWith(
      'clean:\n  - keep_rows: "d.x1 >= 0 && op.match(d.site, /^S[0-9]+$/) != null"\n' +
        'features:\n  - derive: {x3: "op.abs(d.x1 - 1) + op.log10(d.x2 + 1)", x4: "Math.max(d.x1, d.x2)"}\n',
    );
    const s = scenario({ 'recipe.yaml': text });
    await expectOutcome(s.dir, run(s), { code: 0, changes: ['out/small/'] });
  });
});

describe('expression evaluation has a time budget', () => {
  let saved: string | undefined;
  beforeEach(() => {
    saved = process.env[EXPRESSION_BUDGET_VARIABLE];
    process.env[EXPRESSION_BUDGET_VARIABLE] = '0.3';
  });
  afterEach(() => {
    if (saved === undefined) delete process.env[EXPRESSION_BUDGET_VARIABLE];
    else process.env[EXPRESSION_BUDGET_VARIABLE] = saved;
  });

  it('stops a catastrophically backtracking regular expression in keep_rows, at the expression', async () => {
    const expr = `${CATASTROPHIC} == null`;
    const text = recipeWith(`clean:\n  - keep_rows: "${expr}"\n`);
    const s = scenario({ 'recipe.yaml': text, 'data/obs.csv': hostileData() });
    const t0 = performance.now();
    await expectOutcome(s.dir, run(s), {
      code: 1,
      err: `${displayOf(s.recipe)}:${lineColOf(text, `"${expr}"`)}: ${messages.expressionTimeout('clean[0] keep_rows', expr, 0.3, EXPRESSION_BUDGET_VARIABLE)}`,
    });
    expect(performance.now() - t0).toBeLessThan(15_000);
  }, 30_000);

  it('stops one in a derived column, naming that column', async () => {
    const expr = `${CATASTROPHIC} == null ? 1 : 0`;
    const text = recipeWith(`features:\n  - derive: {x3: "d.x1 * 2", x4: "${expr}"}\n`);
    const s = scenario({ 'recipe.yaml': text, 'data/obs.csv': hostileData() });
    await expectOutcome(s.dir, run(s), {
      code: 1,
      err: `${displayOf(s.recipe)}:${lineColOf(text, `"${expr}"`)}: ${messages.expressionTimeout('features[0] derive, column "x4"', expr, 0.3, EXPRESSION_BUDGET_VARIABLE)}`,
    });
  }, 30_000);

  it('applies in predict, which replays the derived columns on new rows', async () => {
    const expr = `${CATASTROPHIC} == null ? 1 : 0`;
    const text = recipeWith(`features:\n  - derive: {x4: "${expr}"}\n`);
    const s = scenario({ 'recipe.yaml': text, 'new/obs.csv': hostileData() });
    await expectOutcome(s.dir, run(s), { code: 0, changes: ['out/small/'] });
    const runFolder = join(s.dir, 'out/small');
    await expectOutcome(s.dir, ['predict', runFolder, join(s.dir, 'new/obs.csv'), '--out', join(s.dir, 'predicted.csv')], {
      code: 1,
      err: `${displayOf(join(s.dir, 'recipe.yaml'))}: ${messages.expressionTimeout('features[0] derive, column "x4"', expr, 0.3, EXPRESSION_BUDGET_VARIABLE)}`,
    });
  }, 30_000);

  it('refuses a budget that is not a positive number of seconds', async () => {
    process.env[EXPRESSION_BUDGET_VARIABLE] = 'soon';
    const s = scenario({ 'recipe.yaml': recipeWith('clean:\n  - keep_rows: "d.x1 >= 0"\n') });
    await expectOutcome(s.dir, run(s), { code: 2, err: messages.expressionBudgetValue(EXPRESSION_BUDGET_VARIABLE, 'soon') });
  });
});

describe('engine limits and oversized text are located messages', () => {
  it('an invalid string length from op.repeat names the step and the expression', async () => {
    const expr = 'op.repeat(d.site, 1e9)';
    const text = recipeWith(`features:\n  - derive: {x3: "${expr}"}\n`);
    const s = scenario({ 'recipe.yaml': text });
    await expectOutcome(s.dir, run(s), {
      code: 1,
      err: `${displayOf(s.recipe)}:${lineColOf(text, `"${expr}"`)}: ${messages.expressionFailed('features[0] derive, column "x3"', expr, 'RangeError: Invalid string length')}`,
    });
  });

  it('a huge op.padstart result is refused before anything reads it', async () => {
    const expr = "op.padstart(d.site, 300000000, 'x')";
    const text = recipeWith(`features:\n  - derive: {x3: "${expr}"}\n`);
    const s = scenario({ 'recipe.yaml': text });
    await expectOutcome(s.dir, run(s), {
      code: 1,
      err: `${displayOf(s.recipe)}:${lineColOf(text, `"${expr}"`)}: ${messages.expressionTextTooLong('features[0] derive, column "x3"', expr, 300_000_000, MAX_TEXT_VALUE_CHARS, 'one value')}`,
    });
  });
});

describe('keep_rows needs true or false', () => {
  it('refuses a number-valued condition, saying what it gave', async () => {
    const expr = 'd.x1 + 1';
    const text = recipeWith(`clean:\n  - keep_rows: "${expr}"\n`);
    const s = scenario({ 'recipe.yaml': text });
    await expectOutcome(s.dir, run(s), {
      code: 1,
      err: `${displayOf(s.recipe)}:${lineColOf(text, `"${expr}"`)}: ${messages.keepRowsNotBoolean('clean[0] keep_rows', expr, '1 (a number) at row 1 of the table reaching this step', 60, 60)}`,
    });
  });

  it('refuses a text-valued condition', async () => {
    const text = recipeWith('clean:\n  - keep_rows: "d.site"\n');
    const s = scenario({ 'recipe.yaml': text });
    await expectOutcome(s.dir, run(s), {
      code: 1,
      err: messages.keepRowsNotBoolean('clean[0] keep_rows', 'd.site', '"S0" (text) at row 1 of the table reaching this step', 60, 60),
    });
  });

  it('still drops rows where the condition is missing', async () => {
    const input: Frame = { rows: 4, columns: [{ name: 'x1', type: 'number', values: Float64Array.from([1, NaN, -1, 2]) }] };
    const out = (await keepRows.run([asOutput(input)], { expr: 'd.x1 != null ? d.x1 >= 0 : null' }, stepContext())) as FrameOutput;
    expect(Array.from(out.frame.columns[0].values as Float64Array)).toEqual([1, 2]);
  });
});

describe('expressions whose value changes from run to run', () => {
  for (const [expr, fn] of [
    ['d.x1 + op.random()', 'random'],
    ['op.now() - d.x1', 'now'],
    ['op.year(op.datetime()) + d.x1', 'datetime'],
    ['op.abs(op.utcdatetime() - 0)', 'utcdatetime'],
  ] as const) {
    it(`are refused at check: ${expr}`, async () => {
      const text = SMALL_RECIPE.replace('target: y', `features:\n  - derive: {x3: "${expr}"}\ntarget: y`);
      const s = scenario({ 'recipe.yaml': text });
      await expectOutcome(s.dir, ['check', s.recipe], {
        code: 2,
        err: `${displayOf(s.recipe)}:${lineColOf(text, `"${expr}"`)}: ${messages.expressionNotRepeatable(expr, fn)}`,
      });
    });
  }

  it('accept a fixed date', async () => {
    const text = SMALL_RECIPE.replace('target: y', 'features:\n  - derive: {x3: "op.year(op.datetime(2024, 0, 1)) + d.x1"}\ntarget: y');
    const s = scenario({ 'recipe.yaml': text });
    await expectOutcome(s.dir, ['check', s.recipe], { code: 0 });
  });
});

describe('derived values that are not values', () => {
  it('stop at the derived column when an expression gives a list, naming the row', async () => {
    const expr = 'op.match(d.site, /S(\\\\d+)/)';
    const text = SMALL_RECIPE.replace('target: y', `features:\n  - derive: {x3: "${expr}"}\ntarget: y`);
    const s = scenario({ 'recipe.yaml': text });
    await expectOutcome(s.dir, ['run', s.recipe, '--cache', s.cache, '--workers', '1'], {
      code: 1,
      err: messages.expressionNotAValue('features[0] derive, column "x3"', 'op.match(d.site, /S(\\d+)/)', 'a list', 1),
    });
  });
});

describe('expressions over missing values', () => {
  const frame: Frame = {
    rows: 4,
    columns: [
      { name: 'x', type: 'number', values: Float64Array.from([1, 4, 0, Number.NaN]) },
      { name: 's', type: 'string', values: ['a', null, 'c', 'd'] },
    ],
  };

  it('give a missing derived value where an input is missing, not the 0 that arithmetic makes of null', async () => {
    const out = (await derive.run([asOutput(frame)], { columns: { y: 'd.x * 2', m: 'd.x + 1', t: "d.s + 'z'" } }, stepContext())) as FrameOutput;
    const col = (name: string) => Array.from(out.frame.columns.find((c) => c.name === name)!.values as ArrayLike<number | string | null>, (v) => (typeof v === 'number' && Number.isNaN(v) ? null : v));
    expect(col('y')).toEqual([2, 8, 0, null]);
    expect(col('m')).toEqual([2, 5, 1, null]);
    expect(col('t')).toEqual(['az', null, 'cz', 'dz']);
  });

  it('drop a row from keep_rows when the condition reads a missing value, even where null < 2 would be true', async () => {
    const out = (await keepRows.run([asOutput(frame)], { expr: 'd.x < 2' }, stepContext())) as FrameOutput;
    expect(Array.from(out.frame.columns[0].values as Float64Array)).toEqual([1, 0]);
  });
});
