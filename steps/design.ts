import { column, isMissing, type Frame } from '../core/frame.js';
import { DendrologError, messages } from '../core/messages.js';
import type { FeatureStep } from '../core/recipe-types.js';
import type { RecipeContract } from '../core/step-types.js';
import { dict, has } from '../core/dict.js';
import { learnedFeatures } from './learned.js';

import type { Matrix } from '../models/checks.js';

/** Column-major numeric matrix handed to the model engines (the engines' own type). */
export type { Matrix };

/** What the learned feature steps took from training rows; applied unchanged to test rows. */
export interface LearnedDesign {
  predictors: string[];
  /** Names of the matrix columns, after one-hot expansion. */
  names: string[];
  impute: Record<string, number>;
  standardize: Record<string, { mean: number; sd: number }>;
  oneHot: Record<string, { categories: string[]; unseen: 'error' | 'other' }>;
}

/**
 * A feature kind learned from training rows: how a recipe writes it (its contract) and what it
 * takes from the rows it is fitted on into the design, which applyDesign then applies unchanged.
 */
export interface LearnedFeature<P> {
  kind: string;
  recipe: RecipeContract<P>;
  /**
   * Where applyDesign applies what the kind learned: fills (0) before scales (1). Kinds learn in
   * stage order, then recipe order, so a kind sees the values the model matrix will hold before
   * it: a scale is learned on the filled values, wherever the recipe lists the fill.
   */
  stage: number;
  /** Writes what the step learns from `rows` of `frame` into `design` (earlier stages' values are there). */
  learn(params: P, frame: Frame, rows: ArrayLike<number>, design: LearnedDesign): void;
}

/** Name of a one-hot indicator column. */
export const indicatorName = (column: string, category: string) => `${column}=${category}`;
/** Name of the indicator that collects categories unseen in training, with `unseen: other`. */
export const OTHER = '(other)';

/**
 * Learns the feature steps' values (medians, means, category lists) from the training rows only,
 * so nothing about the test rows leaks into the model. Steps that are not learned (derive) are
 * passed over: they ran before the model table.
 *
 * Example: `learnDesign(frame, trainRows, steps, ['tp', 'land_use']).names` is
 * `['tp', 'land_use=farm', 'land_use=forest']` when land_use is one-hot encoded.
 */
export function learnDesign(frame: Frame, rows: ArrayLike<number>, steps: FeatureStep[], predictors: string[]): LearnedDesign {
  const learned: LearnedDesign = { predictors, names: [], impute: dict(), standardize: dict(), oneHot: dict() };
  const ordered = steps.filter((s) => has(learnedFeatures, s.kind)).map((s, order) => ({ s, order, stage: learnedFeatures[s.kind].stage }));
  ordered.sort((a, b) => a.stage - b.stage || a.order - b.order);
  for (const { s } of ordered) {
    const { kind, ...params } = s;
    learnedFeatures[kind].learn(params as never, frame, rows, learned);
  }
  for (const p of predictors) {
    const oh = learned.oneHot[p];
    if (!oh) learned.names.push(p);
    else {
      for (const cat of oh.categories) learned.names.push(indicatorName(p, cat));
      if (oh.unseen === 'other') learned.names.push(indicatorName(p, OTHER));
    }
  }
  return learned;
}

/**
 * Builds the model matrix for some rows with learned values. A missing predictor value that no
 * impute step fills, or a category training never saw (with `unseen: error`), stops the run.
 */
export function applyDesign(learned: LearnedDesign, frame: Frame, rows: ArrayLike<number>): Matrix {
  const n = rows.length;
  const columns: Float64Array[] = [];
  for (const p of learned.predictors) {
    const c = column(frame, p);
    const oh = learned.oneHot[p];
    if (oh) {
      const index = new Map(oh.categories.map((v, k) => [v, k] as const));
      const width = oh.categories.length + (oh.unseen === 'other' ? 1 : 0);
      const block = Array.from({ length: width }, () => new Float64Array(n));
      for (let i = 0; i < n; i++) {
        if (isMissing(c, rows[i])) throw new DendrologError(messages.missingInPredictor(p, countMissing(c)), 1);
        const v = String(c.values[rows[i]]);
        const k = index.get(v);
        if (k !== undefined) block[k][i] = 1;
        else if (oh.unseen === 'other') block[width - 1][i] = 1;
        else throw new DendrologError(messages.unseenCategory(p, v, oh.categories), 1);
      }
      columns.push(...block);
      continue;
    }
    const src = c.values as Float64Array;
    const out = new Float64Array(n);
    const fill = learned.impute[p];
    const scale = learned.standardize[p];
    for (let i = 0; i < n; i++) {
      let v = src[rows[i]];
      if (Number.isNaN(v)) {
        if (fill === undefined || Number.isNaN(fill)) {
          throw new DendrologError(messages.missingInPredictor(p, countMissing(c)), 1);
        }
        v = fill;
      }
      out[i] = scale ? (v - scale.mean) / scale.sd : v;
    }
    columns.push(out);
  }
  return { columns, names: [...learned.names], rows: n };
}

/**
 * The positions in the model matrix of each predictor's columns (one, or its one-hot indicators),
 * in the order of `learned.predictors`. Every learned feature step works on one column's own
 * values, row by row, so reordering a predictor's values among rows reorders exactly these columns.
 *
 * Example: with predictors `['tp', 'land_use']` and land_use one-hot over two categories, `[[0], [1, 2]]`.
 */
export function predictorColumns(learned: LearnedDesign): number[][] {
  let at = 0;
  return learned.predictors.map((p) => {
    const oh = learned.oneHot[p];
    const width = oh ? oh.categories.length + (oh.unseen === 'other' ? 1 : 0) : 1;
    const cols = Array.from({ length: width }, (_, k) => at + k);
    at += width;
    return cols;
  });
}

/** The target values of some rows. */
export function targetOf(frame: Frame, target: string, rows: ArrayLike<number>): Float64Array {
  const src = column(frame, target).values as Float64Array;
  const out = new Float64Array(rows.length);
  for (let i = 0; i < rows.length; i++) out[i] = src[rows[i]];
  return out;
}

/** Missing values of a column over the whole model table, so the count does not depend on the fold. */
function countMissing(c: ReturnType<typeof column>): number {
  let n = 0;
  for (let i = 0; i < c.values.length; i++) if (isMissing(c, i)) n++;
  return n;
}
