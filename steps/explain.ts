import { column, takeRows, type Column, type Frame } from '../core/frame.js';
import { shuffle } from '../core/rng.js';
import type { FrameOutput, StepDefinition } from '../core/step-types.js';
import { applyDesign, predictorColumns, targetOf } from './design.js';
import type { FitOutput } from './fit.js';
import type { HoldoutOutput } from './holdout.js';
import { engineFor } from './model-kinds.js';

type LoadedEngineModel = Awaited<ReturnType<ReturnType<typeof engineFor>['load']>>;

export interface ExplainParams {
  target: string;
  repeats: number;
  /** How many of the most important predictors get a partial dependence curve. */
  top: number;
  /** Points along each curve. */
  points: number;
  /**
   * For model kinds that cannot walk their own structure: the training rows the curves average
   * over (a seeded sample when there are more). Trees and forests average over all their in-bag rows.
   */
  sampleRows: number;
}

export interface Importance {
  predictor: string;
  /** Mean increase in holdout MSE when the predictor's values are shuffled among holdout rows. */
  mean: number;
  sd: number;
}

export interface PartialDependence {
  predictor: string;
  kind: 'number' | 'category';
  points: { x: number | string; y: number }[];
}

export interface ExplainOutput {
  model: string;
  repeats: number;
  baselineMse: number;
  importance: Importance[];
  partialDependence: PartialDependence[];
  /** Training rows the curves average over. */
  pdRows: number;
  /**
   * traversal: over every training row, each tree weighting its in-bag draws, by walking the trees
   * (models/partial-dependence.ts); rows: predictions averaged over every training row; sample:
   * over pdRows sampled training rows.
   */
  pdMethod: 'traversal' | 'rows' | 'sample';
}

/**
 * Permutation importance on the holdout rows (each predictor shuffled `repeats` times; mean and
 * sd of the MSE increase), then partial dependence of the most important predictors, averaged
 * over training rows. Predictors are permuted as recorded, before one-hot expansion, so a
 * category counts as one predictor.
 */
export const explain: StepDefinition<ExplainParams, ExplainOutput> = {
  kind: 'explain',
  // 2: draws follow the table and the split only (seedInputs)
  version: 2,
  codec: 'json',
  usesSeed: true,
  // every model of the run shuffles the same way and averages over the same sample, so their
  // explanations differ only by the models
  seedInputs: [0, 1],
  parallel: true,
  async run(inputs, params, ctx) {
    const full = (inputs[0] as FrameOutput).frame;
    const split = inputs[1] as HoldoutOutput;
    const fitted = inputs[2] as FitOutput;
    const design = fitted.design;
    const model = await engineFor(fitted.kind, fitted.model).load(fitted.bytes, 'reading the fitted model');
    const test = takeRows(full, split.test);
    const all = [...Array(test.rows).keys()];
    const y = targetOf(test, params.target, all);
    const mse = (p: Float64Array) => {
      let s = 0;
      for (let i = 0; i < p.length; i++) s += (p[i] - y[i]) ** 2;
      return s / p.length;
    };
    // The model matrix is built once; shuffling a predictor among the rows shuffles its own matrix
    // columns (see predictorColumns), which gives the same numbers as rebuilding it from a shuffled table.
    const x = applyDesign(design, test, all);
    const baselineMse = mse(await model.predict(x, 'prediction of the holdout rows'));
    const columnsOf = predictorColumns(design);
    // each predictor's orders drawn in turn, as they always were; then every predictor's repeats,
    // each predictor in one pass over the trees, spread over the step's threads
    const orders = design.predictors.map((_, j) => {
      const rand = ctx.rng('permutation', j);
      return Array.from({ length: params.repeats }, () => Int32Array.from(shuffle([...all], rand)));
    });
    const jobs = design.predictors.map((_, j) => ({ columns: columnsOf[j] }));
    const permuted = await model.permuted(x, jobs, orders, ctx.workers, 'permutation importance');
    const importance: Importance[] = design.predictors.map((predictor, j) => {
      const rises = permuted[j].map((p) => mse(p) - baselineMse);
      const m = rises.reduce((a, b) => a + b, 0) / rises.length;
      const sd = rises.length > 1 ? Math.sqrt(rises.reduce((s, v) => s + (v - m) ** 2, 0) / (rises.length - 1)) : 0;
      return { predictor, mean: m, sd };
    });
    importance.sort((a, b) => b.mean - a.mean || (a.predictor < b.predictor ? -1 : 1));

    // the trees' own walk when the kind has one; otherwise predictions over a sample of training rows
    const sampleRows = Math.min(params.sampleRows, split.train.length);
    const curve =
      model.partialDependence ??
      sampledCurve(model, design, takeRows(full, shuffle([...split.train], ctx.rng('pd-sample')).slice(0, sampleRows).sort((a, b) => a - b)));
    const partialDependence: PartialDependence[] = [];
    for (const { predictor } of importance.slice(0, params.top)) {
      const c = column(full, predictor);
      const numeric = c.values instanceof Float64Array;
      const xs = numeric ? quantilePoints(split.train.map((r) => (c.values as Float64Array)[r]), params.points) : categoriesOf(c, split.train);
      const own = columnsOf[design.predictors.indexOf(predictor)];
      // the predictor's matrix columns for each value, as the design makes them for any row
      const template = takeRows(full, split.train.slice(0, 1));
      const settings = xs.map((v) => {
        const one = withColumn(template, predictor, (col) => ({ ...col, values: numeric ? Float64Array.of(v as number) : [v as string] }));
        const at = applyDesign(design, one, [0]);
        return own.map((k) => at.columns[k][0]);
      });
      const ys = await curve(own, settings, `partial dependence on ${predictor}`);
      partialDependence.push({ predictor, kind: numeric ? 'number' : 'category', points: xs.map((x, g) => ({ x, y: ys[g] })) });
    }
    const pdRows = model.partialDependence ? split.train.length : sampleRows;
    return { model: fitted.model, repeats: params.repeats, baselineMse, importance, partialDependence, pdRows, pdMethod: model.partialDependence ? 'traversal' : sampleRows < split.train.length ? 'sample' : 'rows' };
  },
  summary: (o) => `top predictor ${o.importance[0]?.predictor ?? 'none'}`,
};

/** Partial dependence the plain way: the mean prediction over `sample` with the columns set to each point. */
function sampledCurve(model: LoadedEngineModel, design: FitOutput['design'], sample: Frame) {
  const sx = applyDesign(design, sample, [...Array(sample.rows).keys()]);
  return async (own: number[], points: ArrayLike<number>[], where: string): Promise<number[]> => {
    const means: number[] = [];
    for (const point of points) {
      const columns = sx.columns.slice();
      own.forEach((k, m) => (columns[k] = new Float64Array(sx.rows).fill(point[m])));
      const p = await model.predict({ ...sx, columns }, where);
      means.push(p.reduce((a, b) => a + b, 0) / p.length);
    }
    return means;
  };
}

function withColumn(frame: Frame, name: string, change: (c: Column) => Column): Frame {
  return { rows: frame.rows, columns: frame.columns.map((c) => (c.name === name ? change(c) : c)) };
}

/** Evenly spaced quantiles (5th to 95th percentile) of the present values, without repeats. */
function quantilePoints(values: number[], n: number): number[] {
  const s = values.filter((v) => !Number.isNaN(v)).sort((a, b) => a - b);
  if (s.length === 0) return [];
  const out: number[] = [];
  for (let i = 0; i < n; i++) {
    const h = (s.length - 1) * (0.05 + (0.9 * i) / Math.max(1, n - 1));
    const lo = Math.floor(h);
    const v = s[lo] + (h - lo) * ((s[Math.min(lo + 1, s.length - 1)] ?? s[lo]) - s[lo]);
    if (out.length === 0 || v !== out[out.length - 1]) out.push(v);
  }
  return out;
}

function categoriesOf(c: Column, rows: number[]): string[] {
  const seen = new Set<string>();
  for (const r of rows) if (c.values[r] !== null) seen.add(String(c.values[r]));
  return [...seen].sort();
}
