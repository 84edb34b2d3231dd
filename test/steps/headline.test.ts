/** The headline step called directly on hand-made choose, fit and score outputs of several models. */
import { describe, expect, it } from 'vitest';
import type { Frame } from '../../core/frame.js';
import { messages } from '../../core/messages.js';
import type { ModelKind } from '../../core/recipe-types.js';
import { metricReasons, metrics, type MetricSet } from '../../models/metrics.js';
import type { ChooseOutput } from '../../steps/choose.js';
import type { FitOutput } from '../../steps/fit.js';
import { headline, holdoutUnreliable, type HeadlineOutput, type HeadlineParams } from '../../steps/headline.js';
import type { HoldoutOutput } from '../../steps/holdout.js';
import type { Cell } from '../../steps/model-kinds.js';
import type { ScoreOutput } from '../../steps/score.js';
import { asOutput, errorOf, stepContext, NO_UNITS } from '../helpers.js';

/**
 * 10 rows: 0–5 train, 6–9 held out. x1 varies; x2 is 4 on every training row (a constant predictor)
 * and varies only on the held-out rows, which must not count.
 */
const frame: Frame = {
  rows: 10,
  columns: [
    { name: 'x1', type: 'number', values: Float64Array.from([1, 2, 3, 4, 5, 6, 7, 8, 9, 10]) },
    { name: 'x2', type: 'number', values: Float64Array.from([4, 4, 4, 4, 4, 4, 1, 2, 3, 5]) },
    { name: 'y', type: 'number', values: Float64Array.from([0, 1, 2, 3, 4, 5, 1, 2, 3, 6]) },
  ],
};
const SPLIT: HoldoutOutput = { train: [0, 1, 2, 3, 4, 5], test: [6, 7, 8, 9], by: 'random', trainGroups: 0, testGroups: 0, cutoff: null, gapRows: 0, units: NO_UNITS };
/** The held-out y. */
const OBSERVED = [1, 2, 3, 6];

interface ModelFixture {
  param: HeadlineParams['models'][number];
  outputs: [ChooseOutput, FitOutput, ScoreOutput];
}

/** Pooled cross-validated metrics with the given RMSE and R² (null: undefined, with a reason). */
function pooled(rmse: number | null, r2: number | null = null): MetricSet {
  const v = (x: number | null) => (x === null ? { value: null, reason: 'no value' } : { value: x });
  return { r2: v(r2), rmse: v(rmse), mae: v(rmse), bias: { value: 0 }, n: 6 };
}

/** A model with a chosen cell scoring `cv` (RMSE) cross-validated, predicting `predicted` for the held-out rows. */
function model(
  name: string,
  kind: ModelKind,
  o: {
    cv: number | null;
    r2?: number | null;
    failed?: string | null;
    predicted?: number[];
    grid?: Record<string, (number | boolean | null)[]>;
    cell?: Cell;
    used?: Record<string, unknown>;
    outsideRange?: Record<string, number>;
  },
): ModelFixture {
  const cell = o.cell ?? {};
  const failed = o.failed ?? null;
  const choose: ChooseOutput = {
    cells: [
      {
        cell,
        pooled: pooled(o.cv, o.r2 ?? null),
        perFold: { r2: { mean: null, sd: null }, rmse: { mean: null, sd: null }, mae: { mean: null, sd: null }, bias: { mean: null, sd: null } },
        used: [{}, {}],
        failed,
      },
    ],
    chosen: 0,
    choose_by: 'rmse',
    failed: failed === null ? null : messages.modelScoreNotFinite('RMSE', failed),
  };
  const fit = { model: name, kind, cell, used: o.used ?? {} } as FitOutput;
  const predicted = o.predicted ?? OBSERVED;
  const score = {
    model: name,
    holdout: metrics(OBSERVED, predicted),
    observed: OBSERVED,
    predictions: predicted,
    outsideRange: o.outsideRange ?? {},
  } as ScoreOutput;
  return { param: { name, kind, grid: o.grid ?? {} }, outputs: [choose, fit, score] };
}

function run(models: ModelFixture[], over: Partial<HeadlineParams> = {}, split = SPLIT): HeadlineOutput {
  const params: HeadlineParams = {
    models: models.map((m) => m.param),
    choose_by: 'rmse',
    holdout_by: 'random',
    folds_by: 'random',
    groups: null,
    time: null,
    predictors: ['x1'],
    ...over,
  };
  return headline.run([asOutput(frame), split, ...models.flatMap((m) => m.outputs)], params, stepContext()) as HeadlineOutput;
}

const codes = (out: HeadlineOutput) => out.warnings.map((w) => w.code);

describe('headline: the choice across models', () => {
  it('chooses the lowest cross-validated RMSE', () => {
    const out = run([model('linear', 'linear', { cv: 1.5 }), model('forest', 'random_forest', { cv: 1 }), model('mean', 'mean', { cv: 3 })]);
    expect(out.chosen).toBe('forest');
  });

  it('chooses the highest cross-validated R² when choosing by R²', () => {
    const models = [model('forest', 'random_forest', { cv: 1, r2: 0.5 }), model('linear', 'linear', { cv: 1.5, r2: 0.8 }), model('mean', 'mean', { cv: 3, r2: 0 })];
    expect(run(models).chosen).toBe('forest');
    expect(run(models, { choose_by: 'r2' }).chosen).toBe('linear');
  });

  it('gives a tie to the earlier model', () => {
    const a = model('a', 'decision_tree', { cv: 1 });
    const b = model('b', 'random_forest', { cv: 1 });
    expect(run([a, b]).chosen).toBe('a');
    expect(run([b, a]).chosen).toBe('b');
  });

  it('never chooses a failed model, even one whose score would win', () => {
    const out = run([model('forest', 'random_forest', { cv: 0.1, failed: 'a reason' }), model('linear', 'linear', { cv: 2 })]);
    expect(out.chosen).toBe('linear');
  });

  it('stops with exit 1 when no model has a defined cross-validated score, naming each reason', async () => {
    const models = [model('linear', 'linear', { cv: null, failed: 'reason one' }), model('mean', 'mean', { cv: null, failed: 'reason two' })];
    const e = await errorOf(() => run(models));
    expect(e.message).toBe(
      messages.noModelScored('RMSE', [
        { model: 'linear', reason: 'reason one' },
        { model: 'mean', reason: 'reason two' },
      ]),
    );
    expect(e.exitCode).toBe(1);
    // the message names the recipe's criterion
    expect((await errorOf(() => run(models, { choose_by: 'r2' }))).message).toBe(
      messages.noModelScored('R²', [
        { model: 'linear', reason: 'reason one' },
        { model: 'mean', reason: 'reason two' },
      ]),
    );
  });
});

describe('headline: skill against the baselines', () => {
  it('is 1 − MSE ratio against a constant baseline, found by its kind whatever its name', () => {
    // held-out y = 1, 2, 3, 6. The baseline predicts 3 everywhere: errors −2, −1, 0, 3, MSE 14/4.
    // The model predicts 1, 2, 3, 5: errors 0, 0, 0, −1, MSE 1/4. Skill 1 − (1/4)/(14/4) = 13/14.
    const out = run([
      model('forest', 'random_forest', { cv: 1, predicted: [1, 2, 3, 5] }),
      model('yardstick', 'mean', { cv: 2, predicted: [3, 3, 3, 3] }),
      model('linear', 'random_forest', { cv: 3, predicted: [3, 3, 3, 3] }),
    ]);
    const forest = out.models.find((m) => m.name === 'forest')!;
    expect(Object.keys(forest.skill)).toEqual(['yardstick']);
    expect(forest.skill.yardstick).toBeCloseTo(13 / 14, 12);
    expect(forest.skillReasons).toEqual({});
    // a baseline has no skill against itself
    expect(Object.keys(out.models.find((m) => m.name === 'yardstick')!.skill)).toEqual([]);
    expect(out.models.map((m) => m.name)).toEqual(['forest', 'yardstick', 'linear']);
  });

  it('is undefined, with the reason, against a baseline whose error is nil', () => {
    const out = run([model('forest', 'random_forest', { cv: 1, predicted: [1, 2, 3, 5] }), model('mean', 'mean', { cv: 2 })]);
    const forest = out.models.find((m) => m.name === 'forest')!;
    expect(forest.skill.mean).toBeNull();
    expect(forest.skillReasons.mean).toBe(metricReasons.negligibleBaselineError());
  });
});

describe('headline: skill beyond float64', () => {
  it('is undefined, with the reason, when the model is worse than the baseline by more than float64 can square', () => {
    // baseline RMSE about 5e-9 (one error of 1e-8 among four rows); model RMSE about 5e149: a ratio near
    // 1e158, whose square (1e316) is beyond the largest float64 (about 1.8e308)
    const out = run([model('forest', 'random_forest', { cv: 1, predicted: [1e150, 1e150, 1e150, 1e150] }), model('mean', 'mean', { cv: 2, predicted: [1, 2, 3, 6 + 1e-8] })]);
    const forest = out.models.find((m) => m.name === 'forest')!;
    expect(forest.skill.mean).toBeNull();
    expect(forest.skillReasons.mean).toMatch(/^the model's RMSE is 2\.0e\+158 times the baseline's/);
  });
});

describe('headline: evaluation warnings', () => {
  it('warns when the chosen value of a numeric grid parameter is at its edge, not at a hard limit or inside', () => {
    // min_leaf 1 and mtry 1 are hard limits (nothing lies below them); a grid with null is not numeric
    const tree = model('tree', 'decision_tree', { cv: 1, grid: { max_depth: [2, 4, 6], min_leaf: [1, 5] }, cell: { max_depth: 6, min_leaf: 1 } });
    const forest = model('forest', 'random_forest', { cv: 2, grid: { trees: [50, 100], mtry: [1, 2], max_depth: [null, 4] }, cell: { trees: 50, mtry: 1, max_depth: 4 } });
    const inside = model('inner', 'decision_tree', { cv: 3, grid: { max_depth: [2, 4, 6] }, cell: { max_depth: 4 } });
    const out = run([tree, forest, inside]);
    expect(out.warnings.filter((w) => w.code === 'grid-edge')).toEqual([
      { code: 'grid-edge', message: messages.gridEdge('tree', 'max_depth', 6, [2, 4, 6]), count: 1 },
      { code: 'grid-edge', message: messages.gridEdge('forest', 'trees', 50, [50, 100]), count: 1 },
    ]);
  });

  it('warns when the chosen model does not beat the linear baseline, cross-validated and on the holdout', () => {
    // equal cross-validated RMSE: the forest comes first and wins the tie without beating the linear model
    const tie = run([model('forest', 'random_forest', { cv: 1, predicted: [1, 2, 3, 4] }), model('lm', 'linear', { cv: 1, predicted: [1, 2, 3, 5] })]);
    expect(tie.chosen).toBe('forest');
    // held-out errors: forest 0, 0, 0, −2 (MSE 1), lm 0, 0, 0, −1 (MSE 1/4): skill 1 − 4 = −3
    expect(tie.models[0].skill.lm).toBeCloseTo(-3, 12);
    expect(tie.warnings.filter((w) => w.code.includes('linear'))).toEqual([
      { code: 'no-better-than-linear', message: messages.noBetterThanLinear('forest', 'lm'), count: 1 },
      { code: 'holdout-no-better-than-linear', message: messages.holdoutNoBetterThanLinear('forest', 'lm', -3), count: 1 },
    ]);
    const beats = run([model('forest', 'random_forest', { cv: 0.5, predicted: [1, 2, 3, 6] }), model('lm', 'linear', { cv: 1, predicted: [1, 2, 3, 5] })]);
    expect(codes(beats).filter((c) => c.includes('linear'))).toEqual([]);
  });

  it('says the holdout is unreliable with fewer than 5 groups or 20 rows', () => {
    expect(run([model('lm', 'linear', { cv: 1 })]).holdoutUnreliable).toBe('4 holdout rows (fewer than 20)');
    expect(holdoutUnreliable({ ...SPLIT, by: 'groups', testGroups: 3 })).toBe('3 holdout groups (fewer than 5)');
    expect(holdoutUnreliable({ ...SPLIT, by: 'groups', testGroups: 1 })).toBe('1 holdout group (fewer than 5)');
    const rows = Array.from({ length: 20 }, (_, i) => i);
    expect(holdoutUnreliable({ ...SPLIT, test: rows })).toBeNull();
    expect(holdoutUnreliable({ ...SPLIT, test: rows, by: 'groups', testGroups: 5 })).toBeNull();
    expect(holdoutUnreliable({ ...SPLIT, test: rows, by: 'groups', testGroups: 4 })).toBe('4 holdout groups (fewer than 5)');
  });

  it('lists every warning in one fixed order, each once', () => {
    const out = run(
      [
        model('forest', 'random_forest', { cv: 1, grid: { min_leaf: [2, 4] }, cell: { min_leaf: 2 }, outsideRange: { x1: 2 } }),
        model('lm', 'linear', { cv: 1, used: { collinear: ['x3'] } }),
      ],
      { groups: 'site', predictors: ['x1', 'x2'] },
    );
    expect(out.warnings).toEqual([
      { code: 'random-split-with-groups', message: messages.randomSplitWithGroups('site', 'the holdout is drawn'), count: 1 },
      { code: 'random-split-with-groups', message: messages.randomSplitWithGroups('site', 'the folds are drawn'), count: 1 },
      { code: 'grid-edge', message: messages.gridEdge('forest', 'min_leaf', 2, [2, 4]), count: 1 },
      { code: 'outside-training-range', message: messages.outsideTrainingRange(2, 'x1'), count: 1 },
      { code: 'no-better-than-linear', message: messages.noBetterThanLinear('forest', 'lm'), count: 1 },
      { code: 'holdout-unreliable', message: messages.holdoutUnreliable('4 holdout rows (fewer than 20)'), count: 1 },
      { code: 'constant-predictor', message: messages.predictorConstant('x2'), count: 1 },
      { code: 'linear-collinear', message: messages.linearCollinear('lm', ['x3']), count: 1 },
    ]);
    // split by groups, no random-split warning; a time column is named only when there are no groups
    expect(codes(run([model('lm', 'linear', { cv: 1 })], { groups: 'site', holdout_by: 'groups', folds_by: 'groups' }))).toEqual(['holdout-unreliable']);
    expect(run([model('lm', 'linear', { cv: 1 })], { time: 'day', folds_by: 'time' }).warnings[0]).toEqual({
      code: 'random-split-with-time',
      message: messages.randomSplitWithTime('day', 'the holdout is drawn'),
      count: 1,
    });
  });
});
