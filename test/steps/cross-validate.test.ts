/** The cross_validate step called directly: out-of-fold predictions of known models on a small exact frame. */
import { describe, expect, it } from 'vitest';
import type { Frame } from '../../core/frame.js';
import { messages } from '../../core/messages.js';
import { engineMessages } from '../../models/engine-errors.js';
import type { CrossValidateOutput, CrossValidateParams } from '../../steps/cross-validate.js';
import { folds, type FoldsOutput } from '../../steps/folds.js';
import { holdout, type HoldoutOutput } from '../../steps/holdout.js';
import { asOutput, crossValidateCell, errorOf, stepContext, NO_UNITS } from '../helpers.js';

/**
 * 12 rows, y = 2·x1 − x2 exactly. Rows 0–7 train, 8–11 are held out; two folds alternate over the
 * training rows (positions 0, 2, 4, 6 in fold 0; 1, 3, 5, 7 in fold 1).
 */
const X1 = [1, 2, 3, 4, 5, 6, 7, 8, 2, 4, 6, 9];
const X2 = [3, 1, 4, 1, 5, 9, 2, 6, 5, 3, 5, 8];
const Y = X1.map((v, i) => 2 * v - X2[i]);

function frameOf(x1: number[], x2: number[]): Frame {
  return {
    rows: x1.length,
    columns: [
      { name: 'site', type: 'string', values: x1.map((_, i) => `S${i >> 1}`) },
      { name: 'x1', type: 'number', values: Float64Array.from(x1) },
      { name: 'x2', type: 'number', values: Float64Array.from(x2) },
      { name: 'y', type: 'number', values: Float64Array.from(Y) },
    ],
  };
}

const frame = frameOf(X1, X2);
const split: HoldoutOutput = { train: [0, 1, 2, 3, 4, 5, 6, 7], test: [8, 9, 10, 11], by: 'random', trainGroups: 0, testGroups: 0, cutoff: null, gapRows: 0, units: NO_UNITS };
const twoFolds: FoldsOutput = { k: 2, by: 'random', fold: [0, 1, 0, 1, 0, 1, 0, 1] };

const PARAMS: CrossValidateParams = { model: 'm', kind: 'mean', cell: {}, target: 'y', predictors: ['x1', 'x2'], features: [], time: null };

async function run(f: Frame, s: HoldoutOutput, fo: FoldsOutput, params: Partial<CrossValidateParams>): Promise<CrossValidateOutput> {
  return crossValidateCell([asOutput(f), s, fo], { ...PARAMS, ...params });
}

describe('cross_validate', () => {
  it('predicts each fold with the mean of the other fold’s targets (mean model)', async () => {
    const out = await run(frame, split, twoFolds, { kind: 'mean' });
    // training y = −1, 3, 2, 7, 5, 3, 12, 10: fold 0 (−1, 2, 5, 12) has mean 18/4 = 4.5,
    // fold 1 (3, 7, 3, 10) has mean 23/4 = 5.75; each fold is predicted by the other's mean
    expect(Y.slice(0, 8)).toEqual([-1, 3, 2, 7, 5, 3, 12, 10]);
    expect(out.predictions).toEqual([5.75, 4.5, 5.75, 4.5, 5.75, 4.5, 5.75, 4.5]);
    expect(out.fold).toEqual(twoFolds.fold);
    expect(out.used).toEqual([{}, {}]);
    expect(out.nonFinite).toBeNull();
  });

  it('recovers y = 2·x1 − x2 out of fold with a linear model', async () => {
    const out = await run(frame, split, twoFolds, { kind: 'linear' });
    // each fold's 4 training rows determine the exact plane (intercept and 2 coefficients); what is
    // left is QR rounding, a few ε × |y| ≈ 1e-14, so 1e-9 is a wide margin that still catches any real error
    out.predictions.forEach((p, k) => expect(Math.abs((p as number) - Y[k])).toBeLessThan(1e-9));
  });

  it('tests every training row exactly once with holdout and folds drawn by the upstream steps', async () => {
    const s = holdout.run([asOutput(frame)], { target: 'y', by: 'random', fraction: 0.25, cutoff: null, gap: 0, groups: null, time: null }, stepContext()) as HoldoutOutput;
    const fo = folds.run([asOutput(frame), s], { target: 'y', k: 3, by: 'random', gap: 0, groups: null, time: null }, stepContext()) as FoldsOutput;
    const out = await run(frame, s, fo, { kind: 'mean' });
    // the mean model predicts each row with the mean y of the training rows in the other folds
    s.train.forEach((r, k) => {
      const others = s.train.filter((_, j) => fo.fold[j] !== fo.fold[k]).map((i) => Y[i]);
      expect(out.predictions[k]).toBeCloseTo(others.reduce((a, b) => a + b, 0) / others.length, 12);
    });
    expect(out.predictions).toHaveLength(9);
    expect(out.used).toHaveLength(3);
  });

  it('refuses predictors that are all constant over the training rows', async () => {
    // x1 and x2 take one value on rows 0–7 and vary only on the held-out rows
    const flat = frameOf([1, 1, 1, 1, 1, 1, 1, 1, 2, 3, 4, 5], [7, 7, 7, 7, 7, 7, 7, 7, 1, 2, 3, 4]);
    const e = await errorOf(() => run(flat, split, twoFolds, { kind: 'linear' }));
    expect([e.message, e.exitCode]).toEqual([messages.predictorsAllConstant(['x1', 'x2']), 1]);
  });

  it('turns an engine refusal into a message naming the model, the fold and the cell', async () => {
    // each fold trains on 4 rows; min_leaf 5 needs at least 10
    const e = await errorOf(() => run(frame, split, twoFolds, { model: 'tree', kind: 'decision_tree', cell: { max_depth: null, min_leaf: 5 } }));
    expect([e.message, e.exitCode]).toEqual([
      messages.modelEngineFailed('tree', 'cross-validation fold 1 of 2, max_depth=none min_leaf=5', engineMessages.tooFewRows(4, 5)),
      1,
    ]);
  });
});
