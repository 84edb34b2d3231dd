/** The deduplicate cleaning step: exact row choices on a small frame, its recipe checks, and predict. */
import { readFileSync, writeFileSync } from 'node:fs';
import { join } from 'node:path';
import { describe, expect, it } from 'vitest';
import type { Frame } from '../../core/frame.js';
import { messages } from '../../core/messages.js';
import type { FrameOutput } from '../../core/step-types.js';
import { displayOf } from '../../runner/recipe.js';
import { deduplicate, type DeduplicateParams } from '../../steps/deduplicate.js';
import { asOutput, SMALL_RECIPE, smallData, stepContext } from '../helpers.js';
import { expectOutcome, lineColOf, scenario } from '../hostile/harness.js';

/** site, day (a date with one missing), y: rows 0/1 repeat (A, d1), rows 3/4 repeat (B, missing). */
const frame: Frame = {
  rows: 6,
  columns: [
    { name: 'site', type: 'string', values: ['A', 'A', 'B', 'B', 'B', 'C'] },
    { name: 'day', type: 'date', values: Float64Array.from([1, 1, 1, NaN, NaN, 1]) },
    { name: 'y', type: 'number', values: Float64Array.from([10, 11, 12, 13, 14, 15]) },
  ],
};

async function keptY(params: DeduplicateParams): Promise<{ y: number[]; out: FrameOutput }> {
  const out = (await deduplicate.run([asOutput(frame)], params, stepContext())) as FrameOutput;
  return { y: Array.from(out.frame.columns[2].values as Float64Array), out };
}

describe('deduplicate', () => {
  it('keeps the first row of each repeated key, in input order, and counts what it dropped', async () => {
    const { y, out } = await keptY({ columns: ['site', 'day'], keep: 'first' });
    expect(y).toEqual([10, 12, 13, 15]);
    expect(out.notes).toMatchObject({ rowsIn: 6, rowsOut: 4 });
    expect(out.notes.detail).toBe('2 rows dropped: 2 values of site, day appear more than once (kept the first of each)');
  });

  it('keeps the last row of each repeated key', async () => {
    expect((await keptY({ columns: ['site', 'day'], keep: 'last' })).y).toEqual([11, 12, 14, 15]);
  });

  it('keeps no row of a repeated key with keep: none', async () => {
    expect((await keptY({ columns: ['site', 'day'], keep: 'none' })).y).toEqual([12, 15]);
  });

  it('treats a missing key value as a value of its own, and one column as a key', async () => {
    // by site alone, A and B repeat; C stays
    expect((await keptY({ columns: ['site'], keep: 'none' })).y).toEqual([15]);
    // by day alone: day 1 (rows 0, 1, 2, 5) and missing (rows 3, 4)
    expect((await keptY({ columns: ['day'], keep: 'first' })).y).toEqual([10, 13]);
  });

  it('tells 1 (a number) and "1" (a text) apart', async () => {
    const mixed: Frame = {
      rows: 2,
      columns: [
        { name: 'a', type: 'string', values: ['1', '1'] },
        { name: 'b', type: 'number', values: Float64Array.from([1, 2]) },
      ],
    };
    const out = (await deduplicate.run([asOutput(mixed)], { columns: ['a', 'b'], keep: 'first' }, stepContext())) as FrameOutput;
    expect(out.frame.rows).toBe(2);
  });
});

const RECIPE = SMALL_RECIPE.replace('target: y', 'clean:\n  - deduplicate: {columns: [site, x1]}\ntarget: y');

/** smallData with its first three data rows repeated at the end. */
function dataWithRepeats(): string {
  const lines = smallData().trimEnd().split('\n');
  return [...lines, ...lines.slice(1, 4)].join('\n') + '\n';
}

describe('deduplicate in a recipe', () => {
  it('defaults keep to first, drops the repeats and says so in the cleaning table', async () => {
    const s = scenario({ 'recipe.yaml': RECIPE, 'data/obs.csv': dataWithRepeats() });
    await expectOutcome(s.dir, ['run', s.recipe, '--cache', s.cache, '--workers', '1'], { code: 0, changes: ['out/small/'] });
    const manifest = JSON.parse(readFileSync(join(s.dir, 'out/small/run-record.json'), 'utf8'));
    expect(manifest.recipe.normalized.clean).toEqual([{ kind: 'deduplicate', columns: ['site', 'x1'], keep: 'first' }]);
    expect(readFileSync(join(s.dir, 'out/small/report.html'), 'utf8')).toContain('3 rows dropped: 3 values of site, x1 appear more than once (kept the first of each)');
  });

  it('refuses a key column that does not exist, at its position', async () => {
    const text = RECIPE.replace('[site, x1]', '[site, x9]');
    const s = scenario({ 'recipe.yaml': text });
    await expectOutcome(s.dir, ['check', s.recipe], {
      code: 2,
      err: `${displayOf(s.recipe)}:${lineColOf(text, 'x9]')}: ${messages.unknownColumn('x9', 'clean[0] (deduplicate)', ['site', 'x1', 'x2', 'y'], 'x1')}`,
    });
  });

  it('refuses a keep that is not first, last or none, at its position', async () => {
    const text = RECIPE.replace('{columns: [site, x1]}', '{columns: [site, x1], keep: latest}');
    const s = scenario({ 'recipe.yaml': text });
    const r = await expectOutcome(s.dir, ['check', s.recipe], { code: 2 });
    expect(r.err).toContain(`${displayOf(s.recipe)}:${lineColOf(text, 'latest')}: `);
    expect(r.err).toContain('"first", "last", "none"');
  });

  it('is applied by predict, naming the rows it removed, and the run verifies', async () => {
    const s = scenario({ 'recipe.yaml': RECIPE, 'data/obs.csv': dataWithRepeats(), 'new.csv': dataWithRepeats() });
    await expectOutcome(s.dir, ['run', s.recipe, '--cache', s.cache, '--workers', '1'], { code: 0, changes: ['out/small/'] });
    const run = join(s.dir, 'out/small');
    const r = await expectOutcome(s.dir, ['predict', run, join(s.dir, 'new.csv'), '--out', join(s.dir, 'p.csv')], { code: 0, changes: ['p.csv'] });
    expect(r.out).toContain('60 of 63 rows predicted, 3 not');
    const lines = readFileSync(join(s.dir, 'p.csv'), 'utf8').trimEnd().split('\n');
    expect(lines.at(-1)).toMatch(/,"removed by clean\[0\] deduplicate: a row with the same site, x1 was kept \(keep: first\)"$/);
    await expectOutcome(s.dir, ['verify', run, '--workers', '1'], { code: 0 });
  });

  it('is left out by predict when the new file lacks a key column, and says so', async () => {
    const text = SMALL_RECIPE.replace('target: y', 'clean:\n  - deduplicate: {columns: [site, y]}\ntarget: y');
    const s = scenario({ 'recipe.yaml': text, 'data/obs.csv': dataWithRepeats() });
    await expectOutcome(s.dir, ['run', s.recipe, '--cache', s.cache, '--workers', '1'], { code: 0, changes: ['out/small/'] });
    const noTarget = dataWithRepeats()
      .split('\n')
      .map((l) => l.split(',').slice(0, 3).join(','))
      .join('\n');
    writeFileSync(join(s.dir, 'new.csv'), noTarget);
    const r = await expectOutcome(s.dir, ['predict', join(s.dir, 'out/small'), join(s.dir, 'new.csv'), '--out', join(s.dir, 'p.csv')], { code: 0, changes: ['p.csv', 'new.csv'] });
    expect(r.out).toContain('steps that need it were skipped: clean[0] deduplicate');
  });
});
