/** The fit step called directly: the chosen cell refitted on the training rows only. */
import { describe, expect, it } from 'vitest';
import type { Frame } from '../../core/frame.js';
import { messages } from '../../core/messages.js';
import { engineMessages } from '../../models/engine-errors.js';
import { deserializeLinear } from '../../models/linear.js';
import { deserializeMean } from '../../models/mean.js';
import type { MetricSet } from '../../models/metrics.js';
import type { ChooseOutput } from '../../steps/choose.js';
import type { CrossValidateOutput } from '../../steps/cross-validate.js';
import { choose } from '../../steps/choose.js';
import { fit, type FitOutput, type FitParams } from '../../steps/fit.js';
import type { HoldoutOutput } from '../../steps/holdout.js';
import { engineFor, type Cell } from '../../steps/model-kinds.js';
import { asOutput, crossValidateCell, decoded, errorOf, stepContext, NO_UNITS } from '../helpers.js';
import { float64Bytes, float64sOf, packEntry } from '../../core/codec.js';

/**
 * 12 rows, y = 2·x1 − x2 exactly; rows 0–7 train, 8–11 are held out. Training x1 spans 1..8 and
 * x2 1..9; the held-out rows reach x1 = 9 and have y values far from the training ones.
 */
const X1 = [1, 2, 3, 4, 5, 6, 7, 8, 2, 4, 6, 9];
const X2 = [3, 1, 4, 1, 5, 9, 2, 6, 5, 3, 5, 8];
const frame: Frame = {
  rows: 12,
  columns: [
    { name: 'x1', type: 'number', values: Float64Array.from(X1) },
    { name: 'x2', type: 'number', values: Float64Array.from(X2) },
    { name: 'y', type: 'number', values: Float64Array.from(X1.map((v, i) => 2 * v - X2[i])) },
  ],
};
const split: HoldoutOutput = { train: [0, 1, 2, 3, 4, 5, 6, 7], test: [8, 9, 10, 11], by: 'random', trainGroups: 0, testGroups: 0, cutoff: null, gapRows: 0, units: NO_UNITS };

const NONE: MetricSet = { r2: { value: null }, rmse: { value: null }, mae: { value: null }, bias: { value: null }, n: 0 };

/** A choose output that picked cells[chosen]; fit reads nothing else of it. */
function chose(cells: Cell[], chosen: number): ChooseOutput {
  const perFold = { r2: { mean: null, sd: null }, rmse: { mean: null, sd: null }, mae: { mean: null, sd: null }, bias: { mean: null, sd: null } };
  return { cells: cells.map((cell) => ({ cell, pooled: NONE, perFold, used: [], failed: null })), chosen, choose_by: 'rmse', failed: null };
}

const PARAMS: FitParams = { model: 'm', kind: 'mean', target: 'y', predictors: ['x1', 'x2'], features: [] };

async function run(chosen: ChooseOutput, params: Partial<FitParams>, f: Frame = frame): Promise<FitOutput> {
  return decoded<FitOutput>('record', await fit.run([asOutput(f), split, chosen], { ...PARAMS, ...params }, stepContext()));
}

const bytesOf = (out: FitOutput) => out.bytes;

describe('fit', () => {
  it('fits the mean model to the training rows only', async () => {
    const out = await run(chose([{}], 0), { kind: 'mean' });
    // training y = −1, 3, 2, 7, 5, 3, 12, 10: sum 41, mean 41/8 = 5.125, exact in binary
    expect(deserializeMean(bytesOf(out)).value).toBe(41 / 8);
    expect(out.trainingRows).toBe(8);
    expect(out.oobR2).toBeNull();
    expect([out.model, out.kind]).toEqual(['m', 'mean']);
  });

  it('records the predictors’ ranges over the training rows, not the held-out ones', async () => {
    const out = await run(chose([{}], 0), { kind: 'mean' });
    // the held-out x1 = 9 lies outside the training range 1..8
    expect({ ...out.ranges }).toEqual({ x1: { min: 1, max: 8 }, x2: { min: 1, max: 9 } });
  });

  it('recovers the coefficients of y = 2·x1 − x2 with the linear model', async () => {
    const model = deserializeLinear(bytesOf(await run(chose([{}], 0), { kind: 'linear' })));
    expect(model.names).toEqual(['x1', 'x2']);
    // an exact plane through 8 points: QR leaves only rounding, far below 1e-9
    expect(Math.abs(model.coefficients[0] - 2)).toBeLessThan(1e-9);
    expect(Math.abs(model.coefficients[1] + 1)).toBeLessThan(1e-9);
    expect(Math.abs(model.intercept)).toBeLessThan(1e-9);
  });

  it('uses the cell choose picked, as the engine used it', async () => {
    const cells = [
      { max_depth: 1, min_leaf: 1 },
      { max_depth: null, min_leaf: 2 },
    ];
    const out = await run(chose(cells, 1), { model: 'tree', kind: 'decision_tree' });
    expect(out.cell).toEqual(cells[1]);
    expect(out.used).toEqual(cells[1]);
  });

  it('fits the cell that choose picked from cross-validation run in the test', async () => {
    const folds = { k: 2, by: 'random' as const, fold: [0, 1, 0, 1, 0, 1, 0, 1] };
    const cvParams = { model: 'tree', kind: 'decision_tree' as const, target: 'y', predictors: ['x1', 'x2'], features: [], time: null };
    // whichever cell cross-validation favours, fit refits that one
    const cells: Cell[] = [
      { max_depth: 1, min_leaf: 1 },
      { max_depth: null, min_leaf: 1 },
    ];
    const cvs: CrossValidateOutput[] = [];
    for (const cell of cells) cvs.push(await crossValidateCell([asOutput(frame), split, folds], { ...cvParams, cell }));
    const picked = choose.run([asOutput(frame), split, ...cvs], { target: 'y', choose_by: 'rmse', k: 2 }, stepContext()) as ChooseOutput;
    const out = await run(picked, { model: 'tree', kind: 'decision_tree' });
    expect(out.cell).toEqual(cells[picked.chosen]);
    const best = Math.min(...picked.cells.map((c) => c.pooled.rmse.value!));
    expect(picked.cells[picked.chosen].pooled.rmse.value).toBe(best);
  });

  it('learns feature steps on the training rows only', async () => {
    const gap: Frame = { ...frame, columns: frame.columns.map((c) => (c.name === 'x2' ? { ...c, values: Float64Array.from(X2.map((v, i) => (i === 9 ? NaN : v))) } : c)) };
    const out = await run(chose([{}], 0), { kind: 'linear', features: [{ kind: 'impute', columns: ['x2'], with: 'median' }] }, gap);
    // median of the training x2 = 3, 1, 4, 1, 5, 9, 2, 6 (sorted 1, 1, 2, 3, 4, 5, 6, 9) is (3 + 4) / 2
    expect(out.design.impute.x2).toBe(3.5);
  });

  it('turns an engine refusal into a message naming the model and the final fit', async () => {
    // 8 training rows; min_leaf 5 needs at least 10
    const e = await errorOf(() => run(chose([{ max_depth: null, min_leaf: 5 }], 0), { model: 'tree', kind: 'decision_tree' }));
    expect([e.message, e.exitCode]).toEqual([messages.modelEngineFailed('tree', 'final fit on all training rows', engineMessages.tooFewRows(8, 5)), 1]);
  });

  it('stops on a missing training value of a predictor no feature step fills', async () => {
    const gap: Frame = { ...frame, columns: frame.columns.map((c) => (c.name === 'x1' ? { ...c, values: Float64Array.from(X1.map((v, i) => (i === 3 ? NaN : v))) } : c)) };
    const e = await errorOf(() => run(chose([{}], 0), { kind: 'linear' }, gap));
    expect([e.message, e.exitCode]).toEqual([messages.missingInPredictor('x1', 1), 1]);
  });
});

describe('the predictions of the training rows', () => {
  it('are, for every kind, what the fitted model predicts for those rows, bit for bit', async () => {
    const kinds: [FitParams['kind'], Cell][] = [
      ['mean', {}],
      ['linear', {}],
      ['decision_tree', { max_depth: 2, min_leaf: 1 }],
      ['random_forest', { trees: 7, max_depth: null, min_leaf: 1, mtry: 1, sample_fraction: 1, replace: true }],
    ];
    const x = { columns: [Float64Array.from(X1.slice(0, 8)), Float64Array.from(X2.slice(0, 8))], names: ['x1', 'x2'], rows: 8 };
    for (const [kind, cell] of kinds) {
      const out = await run(chose([cell], 0), { kind });
      const model = await engineFor(kind, 'm').load(out.bytes, 'test');
      const predicted = await model.predict(x, 'test');
      expect(Buffer.from(float64Bytes(float64sOf(out.trainingPredictions))).equals(float64Bytes(predicted))).toBe(true);
    }
  });
});

describe('fit in parts (a forest grown as blocks of trees in separate tasks)', () => {
  const forestCell: Cell = { trees: 120, max_depth: null, min_leaf: 1, mtry: null, sample_fraction: 1, replace: true };
  const inputs = [asOutput(frame), split, chose([forestCell], 0)];
  const params = { ...PARAMS, model: 'forest', kind: 'random_forest' };

  it('divides a forest into blocks of 50 trees, and any other kind not at all', () => {
    expect(fit.parts!.divide(inputs, params)).toEqual({ count: 3, unit: 'trees', perPart: 50, total: 120, work: 8 * 50 });
    expect(fit.parts!.divide([asOutput(frame), split, chose([{}], 0)], PARAMS).count).toBe(1);
  });

  it('merges its parts into exactly the output of the whole fit', async () => {
    const whole = await fit.run(inputs, params, stepContext());
    const parts = [await fit.parts!.run(inputs, params, stepContext(), 0, 2), await fit.parts!.run(inputs, params, stepContext(), 2, 3)];
    // compared as the entries they become, model bytes and all
    const merged = await fit.parts!.merge(inputs, params, stepContext(), parts);
    expect(Buffer.from(packEntry('record', merged, [])).equals(packEntry('record', whole, []))).toBe(true);
  });

  it('turns a refusal of the blocks into a message naming the model and the final fit', async () => {
    const parts = [await fit.parts!.run(inputs, params, stepContext(), 0, 2)];
    const e = await errorOf(() => fit.parts!.merge(inputs, params, stepContext(), parts));
    expect([e.message, e.exitCode]).toEqual([messages.modelEngineFailed('forest', 'final fit on all training rows', engineMessages.blocksMissing(100, 120)), 1]);
  });
});
