/** predict as the apply mode of the plan: the run's data steps over new rows, through the executor. */
import { readFileSync, writeFileSync } from 'node:fs';
import { join } from 'node:path';
import { describe, expect, it } from 'vitest';
import type { Frame } from '../../core/frame.js';
import { messages } from '../../core/messages.js';
import type { FrameOutput } from '../../core/step-types.js';
import { planApply } from '../../runner/plan.js';
import { loadRecipe } from '../../runner/recipe.js';
import { newRows, ROW_COLUMN } from '../../steps/new-rows.js';
import { asOutput, SMALL_RECIPE, smallData } from '../helpers.js';
import type { Manifest } from '../../runner/manifest.js';
import { displayOf } from '../../runner/paths.js';
import { expectOutcome, scenario } from '../hostile/harness.js';

/** SMALL_RECIPE with a target computed from y, and a predictor computed from x1. */
const RECIPE = SMALL_RECIPE.replace('target: y', "features:\n  - derive: {y10: 'd.y * 10'}\n  - derive: {lx: 'op.log(d.x1 + 1)'}\ntarget: y10").replace(
  'predictors: [x1, x2]',
  'predictors: [lx, x2]',
);

describe('the new_rows step', () => {
  it('adds the absent declared columns as missing and numbers the rows', () => {
    const frame: Frame = { rows: 3, columns: [{ name: 'x', type: 'number', values: Float64Array.from([5, 6, 7]) }] };
    const out = newRows.run([asOutput(frame)], { absent: [['y', 'number'], ['site', 'string']] }, null as never) as FrameOutput;
    expect(out.frame.columns.map((c) => c.name)).toEqual(['x', 'y', 'site', ROW_COLUMN]);
    expect(Array.from(out.frame.columns[1].values as Float64Array)).toEqual([NaN, NaN, NaN]);
    expect(out.frame.columns[2].values).toEqual([null, null, null]);
    expect(Array.from(out.frame.columns[3].values as Float64Array)).toEqual([0, 1, 2]);
  });
});

describe('the apply plan', () => {
  it('runs the recipe’s own data steps over the new file, and leaves out a step that only makes the absent target', () => {
    const s = scenario({ 'recipe.yaml': RECIPE, 'data/obs.csv': smallData(), 'new.csv': 'site,x1,x2\nA,1,2\n' });
    const { recipe, origin } = loadRecipe(s.recipe);
    const plan = planApply(recipe, { dir: origin.dir, where: () => 'recipe.yaml' }, { path: join(s.dir, 'new.csv'), absent: ['y'], without: new Set(['y10', 'y']) });
    expect(plan.steps.map((st) => st.id)).toEqual(['source obs (new rows)', 'new rows', 'features[1] derive']);
    expect(plan.skipped).toEqual(['features[0] derive']);
    expect(plan.steps[1].params).toEqual({ absent: [['y', 'number']] });
    // the source reads only the columns the file has
    expect(Object.keys((plan.steps[0].params as { columns: object }).columns)).toEqual(['site', 'x1', 'x2']);
  });

  it('still computes a derived predictor the derived target reads, when the file lacks the target’s other raw input', async () => {
    // y10 is computed from c (a derived predictor) and from b, a raw column only the target needs
    const text = SMALL_RECIPE.replace('x2: number, y: number}', 'x2: number, y: number, b: number}')
      .replace('target: y', "features:\n  - derive: {c: 'd.x1 * 2'}\n  - derive: {y10: 'd.c - d.x2 + d.y + d.b'}\ntarget: y10")
      .replace('predictors: [x1, x2]', 'predictors: [c, x2]');
    const data = smallData()
      .trimEnd()
      .split('\n')
      .map((l, i) => `${l},${i === 0 ? 'b' : '1'}`)
      .join('\n');
    const s = scenario({ 'recipe.yaml': text, 'data/obs.csv': data + '\n' });
    await expectOutcome(s.dir, ['run', s.recipe, '--cache', s.cache, '--workers', '1'], { code: 0, changes: ['out/small/'] });
    writeFileSync(join(s.dir, 'new.csv'), 'site,x1,x2\nA,1,2\nB,3,4\n');
    const r = await expectOutcome(s.dir, ['predict', join(s.dir, 'out/small'), join(s.dir, 'new.csv'), '--out', join(s.dir, 'p.csv')], { code: 0, changes: ['p.csv', 'new.csv'] });
    expect(r.out).toContain('2 of 2 rows predicted, 0 not');
    expect(r.out).toContain('steps that need it were skipped: features[1] derive');
  });

  it('writes the prediction also on the original scale of a target with target_scale', async () => {
    const s = scenario({ 'recipe.yaml': SMALL_RECIPE.replace('target: y', 'target: y\ntarget_scale: ln') });
    await expectOutcome(s.dir, ['run', s.recipe, '--cache', s.cache, '--workers', '1'], { code: 0, changes: ['out/small/'] });
    writeFileSync(join(s.dir, 'new.csv'), 'site,x1,x2\nA,1,2\nB,3,4\n');
    await expectOutcome(s.dir, ['predict', join(s.dir, 'out/small'), join(s.dir, 'new.csv'), '--out', join(s.dir, 'p.csv')], { code: 0, changes: ['p.csv', 'new.csv'] });
    const [head, ...rows] = readFileSync(join(s.dir, 'p.csv'), 'utf8').trimEnd().split('\n').map((l) => l.split(','));
    const at = head.indexOf('predicted_y');
    expect(head.slice(at, at + 6)).toEqual(['predicted_y', 'low_y', 'high_y', 'predicted_y_original', 'low_y_original', 'high_y_original']);
    for (const r of rows) for (let j = 0; j < 3; j++) expect(Number(r[at + 3 + j])).toBe(Math.exp(Number(r[at + j])));
    // the run folder's predictions, on both scales too
    const [runHead, ...runRows] = readFileSync(join(s.dir, 'out/small/predictions.csv'), 'utf8').trimEnd().split('\n').map((l) => l.split(','));
    expect(runHead).toEqual(['model_row', 'set', 'observed', 'predicted', 'low', 'high', 'observed_original', 'predicted_original', 'low_original', 'high_original']);
    for (const r of runRows) {
      expect([Number(r[6]), Number(r[7])]).toEqual([Math.exp(Number(r[2])), Math.exp(Number(r[3]))]);
      // training rows have no interval (none of the fold models' residuals is out of sample for them)
      if (r[1] === 'training') expect(r.slice(4, 6).concat(r.slice(8))).toEqual(['', '', '', '']);
      else expect([Number(r[8]), Number(r[9])]).toEqual([Math.exp(Number(r[4])), Math.exp(Number(r[5]))]);
    }
  });

  it('applies in predict: skipped steps and step warnings are printed, and each row gets its prediction or reason', async () => {
    const s = scenario({ 'recipe.yaml': RECIPE, 'data/obs.csv': smallData() });
    await expectOutcome(s.dir, ['run', s.recipe, '--cache', s.cache, '--workers', '1'], { code: 0, changes: ['out/small/'] });
    // x1 = -1 makes log(0): a non-finite derived value, reported and left missing
    writeFileSync(join(s.dir, 'new.csv'), 'site,x1,x2\nA,1,2\nB,-1,2\n');
    const r = await expectOutcome(s.dir, ['predict', join(s.dir, 'out/small'), join(s.dir, 'new.csv'), '--out', join(s.dir, 'p.csv')], {
      code: 0,
      changes: ['p.csv', 'new.csv'],
    });
    expect(r.out).toContain('1 of 2 rows predicted, 1 not');
    expect(r.out).toContain('steps that need it were skipped: features[0] derive');
    expect(r.out).toContain(`warning: ${messages.deriveNonFinite('lx', 'op.log(d.x1 + 1)', 1)}`);
    const lines = readFileSync(join(s.dir, 'p.csv'), 'utf8').trimEnd().split('\n');
    expect(lines[0]).toBe('site,x1,x2,input_row,predicted_y10,low_y10,high_y10,outside_training_range,not_predicted_because');
    expect(lines[1]).toMatch(/^A,1,2,1,-?\d/);
    expect(lines[2]).toBe('B,-1,2,2,,,,,missing lx');
  });

  it("gives the run's own holdout rows the prediction intervals the run gave them, from the fold models in model.dendro", async () => {
    const s = scenario({ 'recipe.yaml': SMALL_RECIPE, 'data/obs.csv': smallData() });
    await expectOutcome(s.dir, ['run', s.recipe, '--cache', s.cache, '--workers', '1'], { code: 0, changes: ['out/small/'] });
    await expectOutcome(s.dir, ['predict', join(s.dir, 'out/small'), join(s.dir, 'data/obs.csv'), '--out', join(s.dir, 'p.csv')], { code: 0, changes: ['p.csv'] });
    const table = (file: string) => readFileSync(join(s.dir, file), 'utf8').trimEnd().split('\n').map((l) => l.split(','));
    const [head, ...rows] = table('p.csv');
    const [, ...run] = table('out/small/predictions.csv');
    const holdout = run.filter((row) => row[1] === 'holdout');
    expect(holdout.length).toBeGreaterThan(0);
    // no cleaning in SMALL_RECIPE: model_row is the input row, counted from 0
    for (const [row, , , predicted, low, high] of holdout) {
      const p = rows[Number(row)];
      expect([p[head.indexOf('predicted_y')], p[head.indexOf('low_y')], p[head.indexOf('high_y')]]).toEqual([predicted, low, high]);
      expect(Number(low)).toBeLessThanOrEqual(Number(high));
    }
  });

  it('writes no interval columns when the recipe turns prediction intervals off', async () => {
    const s = scenario({ 'recipe.yaml': SMALL_RECIPE.replace('evaluation:', 'evaluation:\n  prediction_interval: false') });
    await expectOutcome(s.dir, ['run', s.recipe, '--cache', s.cache, '--workers', '1'], { code: 0, changes: ['out/small/'] });
    const r = await expectOutcome(s.dir, ['predict', join(s.dir, 'out/small'), join(s.dir, 'data/obs.csv'), '--out', join(s.dir, 'p.csv')], { code: 0, changes: ['p.csv'] });
    expect(r.out).not.toContain('prediction interval');
    expect(readFileSync(join(s.dir, 'p.csv'), 'utf8').split('\n')[0]).not.toMatch(/low_|high_/);
    expect(readFileSync(join(s.dir, 'out/small/predictions.csv'), 'utf8').split('\n')[0]).toBe('model_row,set,observed,predicted');
  });

  it('predicts with another model the run fitted (--model), which gives the holdout scores the run recorded for it', async () => {
    const s = scenario({ 'recipe.yaml': SMALL_RECIPE, 'data/obs.csv': smallData() });
    await expectOutcome(s.dir, ['run', s.recipe, '--cache', s.cache, '--workers', '1'], { code: 0, changes: ['out/small/'] });
    const record = JSON.parse(readFileSync(join(s.dir, 'out/small/run-record.json'), 'utf8')) as Manifest;
    expect(record.headline.model).toBe('linear');
    const r = await expectOutcome(s.dir, ['predict', join(s.dir, 'out/small'), join(s.dir, 'data/obs.csv'), '--out', join(s.dir, 'mean.csv'), '--model', 'mean'], { code: 0, changes: ['mean.csv'] });
    expect(r.out).toContain('60 of 60 rows predicted, 0 not');
    expect(r.out).toContain('\nmodel: mean, not the one the run chose (linear)\n');
    const table = (file: string) => readFileSync(join(s.dir, file), 'utf8').trimEnd().split('\n').map((l) => l.split(','));
    const [head, ...rows] = table('mean.csv');
    const [, ...run] = table('out/small/predictions.csv');
    // the mean model predicts the mean of the training rows' target for every row
    const training = run.filter((row) => row[1] === 'training').map((row) => Number(row[2]));
    const mean = training.reduce((a, b) => a + b, 0) / training.length;
    for (const row of rows) expect(Number(row[head.indexOf('predicted_y')])).toBeCloseTo(mean, 12);
    // and over the run's holdout rows, its RMSE is the one the run recorded for the mean model
    const holdout = run.filter((row) => row[1] === 'holdout');
    const rmse = Math.sqrt(holdout.reduce((a, [row, , observed]) => a + (Number(observed) - Number(rows[Number(row)][head.indexOf('predicted_y')])) ** 2, 0) / holdout.length);
    expect(rmse).toBeCloseTo((record.models.find((m) => m.name === 'mean')!.metrics.holdout as { rmse: { value: number } }).rmse.value, 10);
    // naming the headline gives the same file as not naming a model
    await expectOutcome(s.dir, ['predict', join(s.dir, 'out/small'), join(s.dir, 'data/obs.csv'), '--out', join(s.dir, 'a.csv')], { code: 0, changes: ['a.csv'] });
    const named = await expectOutcome(s.dir, ['predict', join(s.dir, 'out/small'), join(s.dir, 'data/obs.csv'), '--out', join(s.dir, 'b.csv'), '--model', 'linear'], { code: 0, changes: ['b.csv'] });
    expect(named.out).toContain('\nmodel: linear, the one the run chose\n');
    expect(readFileSync(join(s.dir, 'b.csv'), 'utf8')).toBe(readFileSync(join(s.dir, 'a.csv'), 'utf8'));
  });

  it('refuses a --model the run did not fit, naming the models it did, and writes nothing', async () => {
    const s = scenario({ 'recipe.yaml': SMALL_RECIPE, 'data/obs.csv': smallData() });
    await expectOutcome(s.dir, ['run', s.recipe, '--cache', s.cache, '--workers', '1'], { code: 0, changes: ['out/small/'] });
    const r = await expectOutcome(s.dir, ['predict', join(s.dir, 'out/small'), join(s.dir, 'data/obs.csv'), '--out', join(s.dir, 'p.csv'), '--model', 'meen'], { code: 2, changes: [] });
    expect(r.err).toContain(messages.modelNotInRun('meen', displayOf(join(s.dir, 'out/small/model.dendro')), ['linear', 'mean'], 'mean'));
    const empty = await expectOutcome(s.dir, ['predict', join(s.dir, 'out/small'), join(s.dir, 'data/obs.csv'), '--out', join(s.dir, 'p.csv'), '--model', ''], { code: 2, changes: [] });
    expect(empty.err).toContain('--model');
  });
});
