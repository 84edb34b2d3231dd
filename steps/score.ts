import { holdoutIntervals, unitSums } from '../models/intervals.js';
import { metrics, type MetricSet, type MetricValue } from '../models/metrics.js';
import type { TargetScale } from '../core/recipe-types.js';
import { TARGET_SCALES } from './target-scale.js';
import { column } from '../core/frame.js';
import type { FrameOutput, StepDefinition } from '../core/step-types.js';
import { applyDesign, targetOf } from './design.js';
import type { FitOutput } from './fit.js';
import type { HoldoutOutput } from './holdout.js';
import { engineFor } from './model-kinds.js';
import { dict } from '../core/dict.js';
import { float64sOf } from '../core/codec.js';

export interface ScoreParams {
  target: string;
  /** The transform the target is on, if any: RMSE, MAE and bias are then also measured on the original scale. */
  targetScale: TargetScale | null;
  groups: string | null;
  /**
   * The column whose values are the units of the intervals (the groups, or the spatial blocks, the
   * holdout was drawn by), so correlated rows move together; null for rows.
   */
  units: string | null;
}

export interface Interval {
  low: number | null;
  high: number | null;
}

export interface ScoreOutput {
  model: string;
  /** Metrics on the holdout rows: the headline skill. */
  holdout: MetricSet;
  /**
   * 90% intervals of the holdout metrics for new units (groups, or rows) from the same population:
   * delete-one-unit jackknife with t on units − 1 degrees of freedom (see models/intervals.ts).
   */
  intervals: Record<'r2' | 'rmse' | 'mae' | 'bias', Interval>;
  /**
   * With a target scale: RMSE, MAE and bias of the back-transformed predictions against the
   * back-transformed observations, in the original quantity's units; null without one.
   */
  original: { scale: TargetScale; rmse: MetricValue; mae: MetricValue; bias: MetricValue } | null;
  /** In-sample metrics on the training rows: not skill, shown only for contrast. */
  training: MetricSet;
  /** Holdout predictions in holdout row order. */
  predictions: number[];
  observed: number[];
  /** Per predictor, holdout rows whose value lies outside the training rows' range. */
  outsideRange: Record<string, number>;
  /** In-sample predictions of the training rows, in the holdout's train order. */
  trainingPredictions: number[];
  /** The group of each holdout row, when the recipe names groups. */
  groups: string[] | null;
}

/** Scores a fitted model once on the holdout rows, with jackknife intervals over the holdout's groups (or rows). */
export const score: StepDefinition<ScoreParams, ScoreOutput> = {
  kind: 'score',
  // 6: jackknife-t intervals over holdout units on log scales, no random draws; 5: draws followed the
  // table and the split only; 4: stable metric sums; R² undefined for a negligible spread
  version: 6,
  codec: 'json',
  async run(inputs, params, ctx) {
    const frame = (inputs[0] as FrameOutput).frame;
    const split = inputs[1] as HoldoutOutput;
    const fitted = inputs[2] as FitOutput;
    const model = await engineFor(fitted.kind, fitted.model).load(fitted.bytes, 'reading the fitted model');
    const y = targetOf(frame, params.target, split.test);
    // rows spread over the threads the step may use: the numbers are the same for any count
    const pred = await model.predict(applyDesign(fitted.design, frame, split.test), 'prediction of the holdout rows', ctx.workers);
    // the fit's own predictions of its training rows, the same as predicting them anew
    const trainPred = float64sOf(fitted.trainingPredictions);
    const units: number[][] = [];
    if (params.units) {
      const g = column(frame, params.units).values;
      const byGroup = new Map<string, number[]>();
      split.test.forEach((r, k) => {
        const key = String(g[r]);
        const list = byGroup.get(key);
        if (list) list.push(k);
        else byGroup.set(key, [k]);
      });
      units.push(...byGroup.values());
    } else split.test.forEach((_, k) => units.push([k]));
    const holdout = metrics(y, pred);
    const points = { r2: holdout.r2.value, rmse: holdout.rmse.value, mae: holdout.mae.value, bias: holdout.bias.value };
    const bounds = holdoutIntervals(unitSums(units, y, pred), 0.9, points);
    // the final fit recorded each numeric predictor's training range
    const outsideRange = dict<number>();
    for (const [p, range] of Object.entries(fitted.ranges)) {
      const values = column(frame, p).values as Float64Array;
      let n = 0;
      for (const r of split.test) if (values[r] < range.min || values[r] > range.max) n++;
      if (n > 0) outsideRange[p] = n;
    }
    return {
      model: fitted.model,
      holdout,
      intervals: bounds,
      original: params.targetScale ? originalScale(params.targetScale, y, pred) : null,
      training: metrics(targetOf(frame, params.target, split.train), trainPred),
      predictions: Array.from(pred),
      observed: Array.from(y),
      outsideRange,
      trainingPredictions: Array.from(trainPred),
      groups: params.groups ? split.test.map((r) => String(column(frame, params.groups!).values[r])) : null,
    };
  },
  summary: (o) => `holdout R² ${o.holdout.r2.value === null ? 'undefined' : o.holdout.r2.value.toFixed(3)}`,
};

/** RMSE, MAE and bias on the quantity's own scale, after undoing the target's transform on both sides. */
function originalScale(scale: TargetScale, observed: Float64Array, predicted: Float64Array): NonNullable<ScoreOutput['original']> {
  const back = TARGET_SCALES[scale].inverse;
  const m = metrics(observed.map(back), predicted.map(back));
  return { scale, rmse: m.rmse, mae: m.mae, bias: m.bias };
}
