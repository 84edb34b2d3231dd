/**
 * Do the score step's 90% holdout intervals cover the truth about 90% of the time? A simulation of
 * a grouped linear process with known parameters, where the truth is exact: for the fitted model,
 * the population MSE on new groups is (a − â)² + Σ(β − β̂)² + σ_u² + σ_ε² (x independent standard
 * normal), and R² = 1 − MSE / Var(y). Invented numbers, seeded.
 */
import seedrandom from 'seedrandom';
import { describe, expect, it } from 'vitest';
import type { Frame } from '../../core/frame.js';
import { fitLinear, predictLinear, serializeLinear } from '../../models/linear.js';
import { float64Bytes } from '../../core/codec.js';
import type { FitOutput } from '../../steps/fit.js';
import type { HoldoutOutput } from '../../steps/holdout.js';
import { score, type ScoreOutput } from '../../steps/score.js';
import { asOutput, NO_UNITS, stepContext } from '../helpers.js';

const B = [2, -1];
const A = 0.5;
const SD_GROUP = 1;
const SD_ROW = 1;
const ROWS_PER_GROUP = 5;

/** Holdout groups, training groups four times as many; how often each interval covered the truth. */
async function coverage(heldGroups: number, replicates: number): Promise<{ r2: number; rmse: number }> {
  const rand = seedrandom.alea(`coverage-${heldGroups}`);
  const normal = () => Math.sqrt(-2 * Math.log(1 - rand())) * Math.cos(2 * Math.PI * rand());
  const covered = { r2: 0, rmse: 0 };
  for (let rep = 0; rep < replicates; rep++) {
    const x1: number[] = [];
    const x2: number[] = [];
    const y: number[] = [];
    const site: string[] = [];
    for (let g = 0; g < heldGroups * 5; g++) {
      const u = SD_GROUP * normal();
      for (let k = 0; k < ROWS_PER_GROUP; k++) {
        const a = normal();
        const b = normal();
        x1.push(a);
        x2.push(b);
        y.push(A + B[0] * a + B[1] * b + u + SD_ROW * normal());
        site.push(`g${g}`);
      }
    }
    const test = [...Array(heldGroups * ROWS_PER_GROUP).keys()];
    const train = [...Array(y.length - test.length).keys()].map((i) => i + test.length);
    const xTrain = { columns: [Float64Array.from(train, (i) => x1[i]), Float64Array.from(train, (i) => x2[i])], names: ['x1', 'x2'], rows: train.length };
    const model = fitLinear(xTrain, Float64Array.from(train, (i) => y[i]));
    const mse = (model.intercept - A) ** 2 + (model.coefficients[0] - B[0]) ** 2 + (model.coefficients[1] - B[1]) ** 2 + SD_GROUP ** 2 + SD_ROW ** 2;
    const truth = { r2: 1 - mse / (B[0] ** 2 + B[1] ** 2 + SD_GROUP ** 2 + SD_ROW ** 2), rmse: Math.sqrt(mse) };
    const frame: Frame = {
      rows: y.length,
      columns: [
        { name: 'x1', type: 'number', values: Float64Array.from(x1) },
        { name: 'x2', type: 'number', values: Float64Array.from(x2) },
        { name: 'y', type: 'number', values: Float64Array.from(y) },
        { name: 'site', type: 'string', values: site },
      ],
    };
    const fitted: FitOutput = {
      model: 'linear',
      kind: 'linear',
      cell: {},
      used: {},
      design: { predictors: ['x1', 'x2'], names: ['x1', 'x2'], impute: {}, standardize: {}, oneHot: {} },
      trainingPredictions: float64Bytes(predictLinear(model, xTrain)),
      bytes: serializeLinear(model),
      oobR2: null,
      trainingRows: train.length,
      ranges: {},
    };
    const split: HoldoutOutput = { train, test, by: 'groups', testGroups: heldGroups, trainGroups: heldGroups * 4, cutoff: null, gapRows: 0, units: NO_UNITS };
    const out = (await score.run([asOutput(frame), split, fitted], { target: 'y', targetScale: null, groups: 'site', units: 'site' }, stepContext())) as ScoreOutput;
    for (const m of ['r2', 'rmse'] as const) {
      const { low, high } = out.intervals[m];
      if (low !== null && high !== null && low <= truth[m] && truth[m] <= high) covered[m]++;
    }
  }
  return { r2: covered.r2 / replicates, rmse: covered.rmse / replicates };
}

describe('holdout interval coverage (simulation)', () => {
  it('is within three binomial standard errors of 90% for R² and RMSE with 20 holdout groups', async () => {
    const n = 300;
    const tolerance = 3 * Math.sqrt((0.9 * 0.1) / n);
    const c = await coverage(20, n);
    expect(Math.abs(c.r2 - 0.9), `R² coverage ${c.r2}`).toBeLessThan(tolerance);
    expect(Math.abs(c.rmse - 0.9), `RMSE coverage ${c.rmse}`).toBeLessThan(tolerance);
  });
});
