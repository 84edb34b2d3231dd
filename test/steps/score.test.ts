/** The score step called directly: holdout predictions and metrics of known models, and their intervals. */
import { describe, expect, it } from 'vitest';
import type { Frame } from '../../core/frame.js';
import { messages } from '../../core/messages.js';
import { metricReasons } from '../../models/metrics.js';
import type { ChooseOutput } from '../../steps/choose.js';
import { fit, type FitOutput } from '../../steps/fit.js';
import type { HoldoutOutput } from '../../steps/holdout.js';
import type { ModelKind } from '../../core/recipe-types.js';
import { score, type ScoreOutput, type ScoreParams } from '../../steps/score.js';
import { asOutput, decoded, errorOf, stepContext, NO_UNITS } from '../helpers.js';

/**
 * 12 rows in 6 sites of 2, y = 2·x1 − x2 exactly; rows 0–7 train, 8–11 are held out (sites S4, S5).
 * Training x1 spans 1..8; the held-out row 11 has x1 = 9, outside it.
 */
const X1 = [1, 2, 3, 4, 5, 6, 7, 8, 2, 4, 6, 9];
const X2 = [3, 1, 4, 1, 5, 9, 2, 6, 5, 3, 5, 8];

function frameOf(y: number[], x1 = X1): Frame {
  return {
    rows: y.length,
    columns: [
      { name: 'site', type: 'string', values: y.map((_, i) => `S${i >> 1}`) },
      { name: 'x1', type: 'number', values: Float64Array.from(x1) },
      { name: 'x2', type: 'number', values: Float64Array.from(X2) },
      { name: 'y', type: 'number', values: Float64Array.from(y) },
    ],
  };
}

const Y = X1.map((v, i) => 2 * v - X2[i]);
const frame = frameOf(Y);
const split: HoldoutOutput = { train: [0, 1, 2, 3, 4, 5, 6, 7], test: [8, 9, 10, 11], by: 'random', trainGroups: 0, testGroups: 0, cutoff: null, gapRows: 0, units: NO_UNITS };

const chosen: ChooseOutput = {
  cells: [{ cell: {}, pooled: { r2: { value: null }, rmse: { value: null }, mae: { value: null }, bias: { value: null }, n: 0 }, perFold: { r2: { mean: null, sd: null }, rmse: { mean: null, sd: null }, mae: { mean: null, sd: null }, bias: { mean: null, sd: null } }, used: [], failed: null }],
  chosen: 0,
  choose_by: 'rmse',
  failed: null,
};

/** The final fit of a model on the training rows, by the fit step. */
async function fitted(kind: ModelKind, f: Frame = frame): Promise<FitOutput> {
  return decoded<FitOutput>('record', await fit.run([asOutput(f), split, chosen], { model: kind, kind, target: 'y', predictors: ['x1', 'x2'], features: [] }, stepContext()));
}

const PARAMS: ScoreParams = { target: 'y', targetScale: null, groups: 'site', units: null };

async function run(f: Frame, model: FitOutput, params: Partial<ScoreParams> = {}): Promise<ScoreOutput> {
  return (await score.run([asOutput(f), split, model], { ...PARAMS, ...params }, stepContext())) as ScoreOutput;
}

describe('score', () => {
  it('predicts every row with the training mean exactly (mean model), and scores it by hand', async () => {
    const out = await run(frame, await fitted('mean'));
    // training y = −1, 3, 2, 7, 5, 3, 12, 10: mean 41/8 = 5.125, exact in binary
    expect(out.predictions).toEqual([5.125, 5.125, 5.125, 5.125]);
    expect(out.trainingPredictions).toEqual(new Array(8).fill(5.125));
    // held-out y = 2·(2, 4, 6, 9) − (5, 3, 5, 8) = −1, 5, 7, 10; errors −6.125, −0.125, 1.875, 4.875
    expect(out.observed).toEqual([-1, 5, 7, 10]);
    const errors = [-6.125, -0.125, 1.875, 4.875];
    expect(out.holdout.rmse.value).toBeCloseTo(Math.sqrt(errors.reduce((s, e) => s + e * e, 0) / 4), 12);
    expect(out.holdout.mae.value).toBeCloseTo((6.125 + 0.125 + 1.875 + 4.875) / 4, 12);
    // bias is predicted minus observed: 5.125 − mean(−1, 5, 7, 10) = 5.125 − 5.25
    expect(out.holdout.bias.value).toBeCloseTo(-0.125, 12);
    // the training mean explains none of the training variance: R² = 1 − SS_tot/SS_tot = 0
    expect(out.training.r2.value).toBeCloseTo(0, 12);
    expect(out.groups).toEqual(['S4', 'S4', 'S5', 'S5']);
  });

  it('gives R² 1 on the holdout for a linear model of y = 2·x1 − x2', async () => {
    const out = await run(frame, await fitted('linear'));
    // the fit is exact up to QR rounding (errors of a few ε·|y| ≈ 1e-14), so 1 − R² = SS_res/SS_tot
    // is of order 1e-28 / 1e2: any real error in the coefficients would show far above 1e-12
    expect(out.holdout.r2.value).toBeCloseTo(1, 12);
    expect(out.holdout.rmse.value!).toBeLessThan(1e-9);
    out.predictions.forEach((p, k) => expect(Math.abs(p - out.observed[k])).toBeLessThan(1e-9));
    // even at x1 = 9, outside the training range, a plane extrapolates exactly; the row is still counted
    expect({ ...out.outsideRange }).toEqual({ x1: 1 });
  });

  it('puts the point value inside each interval', async () => {
    const out = await run(frame, await fitted('mean'));
    // each interval is symmetric around the point value on its own scale, so it brackets it
    for (const m of ['r2', 'rmse', 'mae', 'bias'] as const) {
      const { low, high } = out.intervals[m];
      const v = out.holdout[m].value;
      if (v === null) continue;
      expect(low!).toBeLessThanOrEqual(v);
      expect(high!).toBeGreaterThanOrEqual(v);
    }
    expect(out.intervals.rmse.low!).toBeLessThan(out.intervals.rmse.high!);
  });

  it('gives a zero-width interval when every held-out error has the same size', async () => {
    // training y averages 0; held-out y = ±1, so every error is ±1 and leaving any row out keeps RMSE = MAE = 1
    const y = [-2, 2, -1, 1, -3, 3, -4, 4, 1, -1, 1, -1];
    const out = await run(frameOf(y), await fitted('mean', frameOf(y)));
    expect(out.holdout.rmse.value).toBe(1);
    expect(out.intervals.rmse).toEqual({ low: 1, high: 1 });
    expect(out.intervals.mae).toEqual({ low: 1, high: 1 });
  });

  it('treats whole groups as units when asked: groups whose errors cancel give a bias interval of exactly 0', async () => {
    // held-out sites S4 (y = 1, −1) and S5 (y = 1, −1): each group has errors +1 and −1, so leaving
    // either group out leaves bias exactly 0
    const y = [-2, 2, -1, 1, -3, 3, -4, 4, 1, -1, 1, -1];
    const out = await run(frameOf(y), await fitted('mean', frameOf(y)), { units: 'site' });
    expect(out.intervals.bias).toEqual({ low: 0, high: 0 });
  });

  it('gives no interval around an R² the constant held-out target leaves undefined', async () => {
    const y = [1, 2, 3, 4, 5, 6, 7, 8, 4, 4, 4, 4];
    const out = await run(frameOf(y), await fitted('mean', frameOf(y)));
    expect(out.holdout.r2).toEqual({ value: null, reason: metricReasons.constant() });
    expect(out.intervals.r2).toEqual({ low: null, high: null });
    expect(out.intervals.rmse.low).not.toBeNull();
  });

  it('measures RMSE, MAE and bias also on the original scale of a log10 target, and nothing without a scale', async () => {
    const out = await run(frame, await fitted('mean'), { targetScale: 'log10' });
    const o = out.observed.map((v) => 10 ** v);
    const p = out.predictions.map((v) => 10 ** v);
    const rmse = Math.sqrt(o.reduce((s, v, i) => s + (v - p[i]) ** 2, 0) / o.length);
    const mae = o.reduce((s, v, i) => s + Math.abs(v - p[i]), 0) / o.length;
    const bias = o.reduce((s, v, i) => s + (p[i] - v), 0) / o.length;
    expect(out.original!.scale).toBe('log10');
    expect(out.original!.rmse.value! / rmse).toBeCloseTo(1, 12);
    expect(out.original!.mae.value! / mae).toBeCloseTo(1, 12);
    expect(out.original!.bias.value! / bias).toBeCloseTo(1, 12);
    expect((await run(frame, await fitted('mean'))).original).toBeNull();
  });

  it('stops on a missing held-out predictor value no feature step fills', async () => {
    const model = await fitted('linear');
    const gap = frameOf(Y, X1.map((v, i) => (i === 10 ? NaN : v)));
    const e = await errorOf(() => run(gap, model));
    expect([e.message, e.exitCode]).toEqual([messages.missingInPredictor('x1', 1), 1]);
  });
});
