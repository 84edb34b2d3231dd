import { metrics, type MetricSet } from '../models/metrics.js';
import { column } from '../core/frame.js';
import type { FrameOutput, StepDefinition } from '../core/step-types.js';
import { applyDesign, targetOf } from './design.js';
import type { FitOutput } from './fit.js';
import type { HoldoutOutput } from './holdout.js';
import { engineFor } from './model-kinds.js';
import { dict } from '../core/dict.js';

export interface ScoreParams {
  target: string;
  groups: string | null;
  /** Bootstrap resamples for the holdout intervals. */
  resamples: number;
  /** Resample whole groups when the holdout was drawn by groups, so correlated rows move together. */
  byGroups: boolean;
}

export interface Interval {
  low: number | null;
  high: number | null;
}

export interface ScoreOutput {
  model: string;
  /** Metrics on the holdout rows: the headline skill. */
  holdout: MetricSet;
  /** 90% bootstrap intervals of the holdout metrics (5th and 95th percentiles). */
  intervals: Record<'r2' | 'rmse' | 'mae' | 'bias', Interval>;
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

/** Scores a fitted model once on the holdout rows, with seeded bootstrap intervals. */
export const score: StepDefinition<ScoreParams, ScoreOutput> = {
  kind: 'score',
  // 5: draws follow the table and the split only (seedInputs); 4: stable metric sums; R² undefined
  // for a negligible spread; no interval around an undefined value
  version: 5,
  codec: 'json',
  usesSeed: true,
  // every model of the run draws the same bootstrap resamples, so their intervals differ only by the models
  seedInputs: [0, 1],
  async run(inputs, params, ctx) {
    const frame = (inputs[0] as FrameOutput).frame;
    const split = inputs[1] as HoldoutOutput;
    const fitted = inputs[2] as FitOutput;
    const model = await engineFor(fitted.kind, fitted.model).load(new Uint8Array(Buffer.from(fitted.bytes, 'base64')), 'reading the fitted model');
    const y = targetOf(frame, params.target, split.test);
    const pred = await model.predict(applyDesign(fitted.design, frame, split.test), 'prediction of the holdout rows');
    const trainPred = await model.predict(applyDesign(fitted.design, frame, split.train), 'prediction of the training rows');
    const rand = ctx.rng('bootstrap');
    const units: number[][] = [];
    if (params.byGroups && params.groups) {
      const g = column(frame, params.groups).values;
      const byGroup = new Map<string, number[]>();
      split.test.forEach((r, k) => {
        const key = String(g[r]);
        const list = byGroup.get(key);
        if (list) list.push(k);
        else byGroup.set(key, [k]);
      });
      units.push(...byGroup.values());
    } else split.test.forEach((_, k) => units.push([k]));
    const draws: Record<'r2' | 'rmse' | 'mae' | 'bias', number[]> = { r2: [], rmse: [], mae: [], bias: [] };
    for (let b = 0; b < params.resamples; b++) {
      const obs: number[] = [];
      const pr: number[] = [];
      for (let u = 0; u < units.length; u++) {
        for (const k of units[Math.floor(rand() * units.length)]) {
          obs.push(y[k]);
          pr.push(pred[k]);
        }
      }
      const m = metrics(obs, pr);
      for (const name of ['r2', 'rmse', 'mae', 'bias'] as const) {
        const v = m[name].value;
        if (v !== null) draws[name].push(v);
      }
    }
    const holdout = metrics(y, pred);
    // no interval around a value that is itself undefined, nor from resamples that mostly had none
    const interval = (name: 'r2' | 'rmse' | 'mae' | 'bias', v: number[]): Interval =>
      holdout[name].value === null || v.length < params.resamples / 2 ? { low: null, high: null } : { low: quantile(v, 0.05), high: quantile(v, 0.95) };
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
      intervals: { r2: interval('r2', draws.r2), rmse: interval('rmse', draws.rmse), mae: interval('mae', draws.mae), bias: interval('bias', draws.bias) },
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

/** Linear-interpolated quantile (type 7, R's default) of unsorted values. */
export function quantile(values: number[], q: number): number {
  const s = [...values].sort((a, b) => a - b);
  const h = (s.length - 1) * q;
  const lo = Math.floor(h);
  return s[lo] + (h - lo) * ((s[Math.min(lo + 1, s.length - 1)] ?? s[lo]) - s[lo]);
}
