import { describe, expect, it } from 'vitest';
import { rmse } from '../../models/metrics.js';
import type { Frame } from '../../core/frame.js';
import type { FeatureStep } from '../../core/recipe-types.js';
import { applyDesign, learnDesign, targetOf } from '../../steps/design.js';
import { foldRows, type FoldsOutput } from '../../steps/folds.js';
import type { HoldoutOutput } from '../../steps/holdout.js';
import { modelKinds } from '../../steps/model-kinds.js';
import { bytesOf } from '../../core/codec.js';
import { asOutput, crossValidateCell, NO_UNITS } from '../helpers.js';

/**
 * A fixture built to expose leakage: three folds whose x ranges do not overlap (1–10, 11–20,
 * 21–30), y = 2x, and half of the last fold's x values missing. A median learned on all rows sees
 * the last fold's x values and fills its gaps with a value close to them; a median learned inside
 * the fold cannot.
 */
function fixture(): { frame: Frame; split: HoldoutOutput; folds: FoldsOutput } {
  const x: number[] = [];
  const y: number[] = [];
  const fold: number[] = [];
  for (let f = 0; f < 3; f++) {
    for (let i = 0; i < 10; i++) {
      const v = f * 10 + i + 1;
      y.push(2 * v);
      x.push(f === 2 && i % 2 === 0 ? NaN : v);
      fold.push(f);
    }
  }
  const frame: Frame = {
    rows: x.length,
    columns: [
      { name: 'x', type: 'number', values: Float64Array.from(x) },
      { name: 'y', type: 'number', values: Float64Array.from(y) },
    ],
  };
  const all = [...Array(x.length).keys()];
  return {
    frame,
    split: { train: all, test: [], by: 'random', trainGroups: 0, testGroups: 0, cutoff: null, gapRows: 0, units: NO_UNITS },
    folds: { k: 3, by: 'random', fold },
  };
}

const features: FeatureStep[] = [{ kind: 'impute', columns: ['x'], with: 'median' }];

/** Out-of-fold predictions with the feature step learned on every row: the leak the runner must not make. */
async function leakyPredictions(frame: Frame, split: HoldoutOutput, folds: FoldsOutput): Promise<number[]> {
  const everywhere = learnDesign(frame, split.train, features, ['x']);
  const out = new Array<number>(split.train.length);
  for (let f = 0; f < folds.k; f++) {
    const { fit, test } = foldRows(folds, f, () => NaN);
    const model = await modelKinds.linear.fit(applyDesign(everywhere, frame, fit), targetOf(frame, 'y', fit), {}, { seed: 's', workers: 1 });
    const p = (await modelKinds.linear.load(bytesOf(model.bytes))).predict(applyDesign(everywhere, frame, test));
    test.forEach((k, j) => (out[k] = p[j]));
  }
  return out;
}

describe('learned feature steps inside cross-validation', () => {
  it('are learned on each fold’s training rows only; learning them on all rows gives a different score', async () => {
    const { frame, split, folds } = fixture();
    const honest = await crossValidateCell([asOutput(frame), split, folds], { model: 'linear', kind: 'linear', cell: {}, target: 'y', predictors: ['x'], features, time: null });
    const y = targetOf(frame, 'y', split.train);
    const leaky = await leakyPredictions(frame, split, folds);
    const honestRmse = rmse(y, honest.predictions as number[]).value!;
    const leakyRmse = rmse(y, leaky).value!;
    expect(Math.abs(leakyRmse - honestRmse)).toBeGreaterThan(1);
    // the median the last fold saw came from folds 0 and 1 only (x = 1..20), never from its own rows
    expect(honest.learned[2].impute.x).toBe(10.5);
    expect(learnDesign(frame, split.train, features, ['x']).impute.x).toBe(13);
  });

  it('take one-hot categories from training rows only, so an unseen category is caught, not silently encoded', () => {
    const frame: Frame = {
      rows: 4,
      columns: [{ name: 'land', type: 'category', values: ['farm', 'farm', 'forest', 'urban'] }],
    };
    const design = learnDesign(frame, [0, 1, 2], [{ kind: 'one_hot', column: 'land', unseen: 'error', max_levels: 1000 }], ['land']);
    expect(design.names).toEqual(['land=farm', 'land=forest']);
    expect(() => applyDesign(design, frame, [3])).toThrow(/category "urban", which the training rows never had/);
    const other = learnDesign(frame, [0, 1, 2], [{ kind: 'one_hot', column: 'land', unseen: 'other', max_levels: 1000 }], ['land']);
    expect(Array.from(applyDesign(other, frame, [3]).columns.map((c) => c[0]))).toEqual([0, 0, 1]);
  });
});
