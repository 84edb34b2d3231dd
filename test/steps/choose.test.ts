/** The choose step called directly on hand-made out-of-fold predictions with known errors. */
import { describe, expect, it } from 'vitest';
import type { Frame } from '../../core/frame.js';
import { messages } from '../../core/messages.js';
import { metricReasons } from '../../models/metrics.js';
import { choose, type ChooseOutput, type ChooseParams } from '../../steps/choose.js';
import type { CrossValidateOutput } from '../../steps/cross-validate.js';
import type { HoldoutOutput } from '../../steps/holdout.js';
import type { Cell } from '../../steps/model-kinds.js';
import { asOutput, stepContext, NO_UNITS } from '../helpers.js';

/** 8 training rows with y = −1, 3, 2, 7, 5, 3, 12, 10, then 2 held-out rows whose y must never matter. */
const Y = [-1, 3, 2, 7, 5, 3, 12, 10, 1000, -1000];
const frame: Frame = { rows: Y.length, columns: [{ name: 'y', type: 'number', values: Float64Array.from(Y) }] };
const split: HoldoutOutput = { train: [0, 1, 2, 3, 4, 5, 6, 7], test: [8, 9], by: 'random', trainGroups: 0, testGroups: 0, cutoff: null, gapRows: 0, units: NO_UNITS };
const FOLD = [0, 1, 0, 1, 0, 1, 0, 1];

/** A cell whose out-of-fold prediction of training row k is y[k] + error(k). */
function cv(cell: Cell, error: (k: number) => number, nonFinite: string | null = null): CrossValidateOutput {
  return { cell, predictions: FOLD.map((_, k) => Y[k] + error(k)), fold: FOLD, used: [{}, {}], learned: [], nonFinite };
}

function run(cells: CrossValidateOutput[], params: Partial<ChooseParams> = {}): ChooseOutput {
  return choose.run([asOutput(frame), split, ...cells], { target: 'y', choose_by: 'rmse', k: 2, ...params }, stepContext()) as ChooseOutput;
}

// errors of constant size c give RMSE = MAE = c exactly; ±0.5 alternating has RMSE 0.5 and bias 0
const offByOne = cv({ depth: 1 }, () => 1);
const offByHalf = cv({ depth: 2 }, (k) => (k % 2 ? -0.5 : 0.5));
const offByTwo = cv({ depth: 3 }, () => -2);

describe('choose', () => {
  it('picks the cell with the lowest cross-validated RMSE', () => {
    const out = run([offByOne, offByHalf, offByTwo]);
    expect(out.chosen).toBe(1);
    expect(out.cells[out.chosen].cell).toEqual({ depth: 2 });
    expect(out.cells.map((c) => c.pooled.rmse.value)).toEqual([1, 0.5, 2]);
    expect(out.cells.map((c) => c.pooled.bias.value)).toEqual([1, 0, -2]);
    expect(out.cells.map((c) => c.pooled.n)).toEqual([8, 8, 8]);
    expect(out.failed).toBeNull();
    expect(out.cells.every((c) => c.failed === null)).toBe(true);
  });

  it('picks the lowest MAE, and the highest R², which both favour the smallest errors here', () => {
    expect(run([offByTwo, offByOne, offByHalf], { choose_by: 'mae' }).chosen).toBe(2);
    const byR2 = run([offByTwo, offByHalf, offByOne], { choose_by: 'r2' });
    expect(byR2.chosen).toBe(1);
    // R² = 1 − SS_res/SS_tot; y has mean 41/8 and SS_tot = Σy² − 8·mean² = 341 − 1681/8 = 1047/8,
    // so the ±0.5 cell (SS_res = 8 · 0.25 = 2) scores 1 − 16/1047
    expect(byR2.cells[1].pooled.r2.value).toBeCloseTo(1 - 16 / 1047, 12);
  });

  it('gives a tie to the earlier cell', () => {
    const same = cv({ depth: 9 }, () => 1);
    expect(run([offByTwo, offByOne, same]).chosen).toBe(1);
  });

  it('reports each fold’s metrics and their mean and sample sd', () => {
    // fold 0 errors are all 1, fold 1 errors all 3: per-fold RMSE 1 and 3, mean 2, sd √((1 + 1) / 1) = √2;
    // pooled RMSE √((4·1 + 4·9) / 8) = √5
    const out = run([cv({}, (k) => (k % 2 ? 3 : 1))]);
    expect(out.cells[0].perFold.rmse.mean).toBe(2);
    expect(out.cells[0].perFold.rmse.sd).toBeCloseTo(Math.SQRT2, 14);
    expect(out.cells[0].perFold.bias).toEqual({ mean: 2, sd: out.cells[0].perFold.rmse.sd });
    expect(out.cells[0].pooled.rmse.value).toBeCloseTo(Math.sqrt(5), 14);
  });

  it('scores only the rows some fold tested', () => {
    // rows 0 and 1 untested (null), as forward time folds leave the earliest block
    const partial: CrossValidateOutput = { ...offByOne, predictions: offByOne.predictions.map((p, k) => (k < 2 ? null : p)) };
    const out = run([partial]);
    expect(out.cells[0].pooled.n).toBe(6);
    expect(out.cells[0].pooled.rmse.value).toBe(1);
  });

  it('never chooses a cell with a non-finite prediction, even one that would otherwise win', () => {
    const reason = messages.predictionNotFinite(Infinity, 'cross-validation fold 1');
    const broken = cv({ depth: 0 }, () => 0, reason);
    const out = run([broken, offByTwo]);
    expect(out.chosen).toBe(1);
    expect(out.cells[0].failed).toBe(reason);
    expect(out.cells[0].pooled.rmse).toEqual({ value: null, reason });
    expect(out.failed).toBeNull();
  });

  it('says the model failed when no cell has a defined score', () => {
    const reason = messages.predictionNotFinite(NaN, 'cross-validation fold 2');
    const out = run([cv({ depth: 0 }, () => 0, reason), cv({ depth: 1 }, () => 0, reason)]);
    expect(out.failed).toBe(messages.modelScoreNotFinite('RMSE', reason));
    expect(choose.summary!(out)).toBe('failed: no cell has a defined score');
  });

  it('says so when R² is undefined because the target is constant', () => {
    const flat: Frame = { rows: 10, columns: [{ name: 'y', type: 'number', values: new Float64Array(10).fill(4) }] };
    const constantCv: CrossValidateOutput = { cell: {}, predictions: FOLD.map(() => 4.5), fold: FOLD, used: [{}, {}], learned: [], nonFinite: null };
    const out = choose.run([asOutput(flat), split, constantCv], { target: 'y', choose_by: 'r2', k: 2 }, stepContext()) as ChooseOutput;
    expect(out.cells[0].failed).toBe(metricReasons.constant());
    expect(out.failed).toBe(messages.modelScoreNotFinite('R²', metricReasons.constant()));
  });
});
