/** The prediction_interval step: CV+ bounds for the holdout rows, their coverage, and why there are none. */
import { describe, expect, it } from 'vitest';
import type { Frame } from '../../core/frame.js';
import { messages } from '../../core/messages.js';
import type { HoldoutOutput } from '../../steps/holdout.js';
import type { IntervalFoldOutput } from '../../steps/interval-fold.js';
import { predictionInterval, type PredictionIntervalOutput, type PredictionIntervalParams } from '../../steps/prediction-interval.js';
import { asOutput, stepContext } from '../helpers.js';

/** 12 training rows (4 groups of 3, one fold per group) and 2 holdout rows of group h. */
const FRAME: Frame = {
  rows: 14,
  columns: [
    { name: 'y', type: 'number', values: Float64Array.from([1, 2, 3, 4, 5, 6, 7, 8, 9, 10, 11, 12, 5, 50]) },
    { name: 'g', type: 'string', values: ['a', 'a', 'a', 'b', 'b', 'b', 'c', 'c', 'c', 'd', 'd', 'd', 'h', 'h'] },
  ],
};
const SPLIT = { train: [0, 1, 2, 3, 4, 5, 6, 7, 8, 9, 10, 11], test: [12, 13] } as HoldoutOutput;

/** Fold f tests group f's rows with residuals 0.5, 1, 1.5 and predicts 6 for every holdout row. */
const folds = (nonFinite: string | null = null): IntervalFoldOutput[] =>
  [0, 1, 2, 3].map((f) => ({ fold: f, cell: {}, tested: [3 * f, 3 * f + 1, 3 * f + 2], residuals: [0.5, 1, 1.5], holdout: [6, 6], design: {} as never, bytes: new Uint8Array(0), nonFinite }));

const run = (params: Partial<PredictionIntervalParams>, fs = folds()) =>
  predictionInterval.run([asOutput(FRAME), SPLIT, ...fs], { level: 0.5, target: 'y', targetScale: null, groups: 'g', units: null, ...params }, stepContext()) as PredictionIntervalOutput;

describe('the prediction_interval step', () => {
  it('bounds each holdout row and counts the rows inside, by group too', () => {
    // 12 row-weighted residuals; at level 0.5, the ⌈0.5 × 13⌉ = 7th smallest of 6 + R is 6 + 1 (four of each value)
    const o = run({});
    expect(o.reason).toBeNull();
    expect([o.unitKind, o.units]).toEqual(['rows', 12]);
    expect(o.holdout).toEqual({ low: [5, 5], high: [7, 7] });
    expect(o.coverage).toMatchObject({ rows: 2, inside: 1, share: 0.5, meanWidth: 2, meanWidthOriginal: null, byGroup: [{ group: 'h', rows: 2, inside: 1 }] });
  });

  it('counts each group once when the folds hold out groups, and says when the groups are too few for the level', () => {
    const o = run({ units: 'g', level: 0.9 });
    expect([o.unitKind, o.units, o.holdout, o.coverage]).toEqual(['groups', 4, null, null]);
    expect(o.reason).toBe('4 groups with out-of-fold residuals; a 90% interval needs at least 9');
    // at 0.75, 4 groups suffice: each weighs 1 (1/3 per row), and 0.75 × 5 = 3.75 is reached only at the largest residual
    expect(run({ units: 'g', level: 0.75 }).holdout).toEqual({ low: [4.5, 4.5], high: [7.5, 7.5] });
  });

  it('gives the mean width on the original scale of a scaled target', () => {
    const o = run({ targetScale: 'log10' });
    expect(o.coverage!.meanWidthOriginal).toBeCloseTo(1e7 - 1e5, 3);
  });

  it('gives no intervals when a fold model predicted a value that is not a finite number', () => {
    const o = run({}, folds(messages.predictionNotFinite(Infinity, 'prediction-interval fold 2 of 4, one setting')));
    expect(o.coverage).toBeNull();
    expect(o.reason).toBe(`a fold model predicted Infinity for a row of prediction-interval fold 2 of 4, one setting, which is not a finite number (the target or predictors are too large for float64 arithmetic?)`);
  });
});
