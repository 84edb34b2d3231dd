import { column, isMissing, type Frame } from '../core/frame.js';
import { DendrologError, messages } from '../core/messages.js';
import type { FeatureStep } from '../core/recipe-types.js';
import { dict, has } from '../core/dict.js';

import type { Matrix } from '../models/checks.js';

/** Column-major numeric matrix handed to the model engines (the engines' own type). */
export type { Matrix };

type LearnedStep = Exclude<FeatureStep, { kind: 'derive' }>;

/** What the learned feature steps took from training rows; applied unchanged to test rows. */
export interface LearnedDesign {
  predictors: string[];
  /** Names of the matrix columns, after one-hot expansion. */
  names: string[];
  impute: Record<string, number>;
  standardize: Record<string, { mean: number; sd: number }>;
  oneHot: Record<string, { categories: string[]; unseen: 'error' | 'other' }>;
}

/** Name of a one-hot indicator column. */
export const indicatorName = (column: string, category: string) => `${column}=${category}`;
/** Name of the indicator that collects categories unseen in training, with `unseen: other`. */
export const OTHER = '(other)';

/**
 * Learns the feature steps' values (medians, means, category lists) from the training rows only,
 * so nothing about the test rows leaks into the model.
 *
 * Example: `learnDesign(frame, trainRows, steps, ['tp', 'land_use']).names` is
 * `['tp', 'land_use=farm', 'land_use=forest']` when land_use is one-hot encoded.
 */
export function learnDesign(frame: Frame, rows: ArrayLike<number>, steps: FeatureStep[], predictors: string[]): LearnedDesign {
  const learned: LearnedDesign = { predictors, names: [], impute: dict(), standardize: dict(), oneHot: dict() };
  for (const step of steps.filter((s): s is LearnedStep => s.kind !== 'derive')) {
    if (step.kind === 'impute') {
      for (const c of step.columns) {
        const v = presentValues(frame, c, rows);
        learned.impute[c] = v.length === 0 ? NaN : step.with === 'mean' ? mean(v) : median(v);
      }
    } else if (step.kind === 'standardize') {
      for (const c of step.columns) {
        const v = presentValues(frame, c, rows).map((x) => (has(learned.impute, c) && Number.isNaN(x) ? learned.impute[c] : x));
        const m = mean(v);
        const sd = Math.sqrt(v.reduce((s, x) => s + (x - m) ** 2, 0) / Math.max(1, v.length - 1));
        learned.standardize[c] = { mean: m, sd: sd > 0 ? sd : 1 };
      }
    } else {
      const values = column(frame, step.column).values;
      const seen = new Set<string>();
      for (let i = 0; i < rows.length; i++) {
        const v = values[rows[i]];
        if (v !== null && !(typeof v === 'number' && Number.isNaN(v))) seen.add(String(v));
      }
      if (seen.size > step.max_levels) throw new DendrologError(messages.tooManyLevels(step.column, seen.size, step.max_levels), 1);
      learned.oneHot[step.column] = { categories: [...seen].sort(), unseen: step.unseen };
    }
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

/** The target values of some rows. */
export function targetOf(frame: Frame, target: string, rows: ArrayLike<number>): Float64Array {
  const src = column(frame, target).values as Float64Array;
  const out = new Float64Array(rows.length);
  for (let i = 0; i < rows.length; i++) out[i] = src[rows[i]];
  return out;
}

function presentValues(frame: Frame, name: string, rows: ArrayLike<number>): number[] {
  const src = column(frame, name).values as Float64Array;
  const out: number[] = [];
  for (let i = 0; i < rows.length; i++) if (!Number.isNaN(src[rows[i]])) out.push(src[rows[i]]);
  return out;
}

/** Missing values of a column over the whole model table, so the count does not depend on the fold. */
function countMissing(c: ReturnType<typeof column>): number {
  let n = 0;
  for (let i = 0; i < c.values.length; i++) if (isMissing(c, i)) n++;
  return n;
}

function mean(v: number[]): number {
  return v.reduce((a, b) => a + b, 0) / v.length;
}

function median(v: number[]): number {
  const s = [...v].sort((a, b) => a - b);
  const m = s.length >> 1;
  return s.length % 2 ? s[m] : (s[m - 1] + s[m]) / 2;
}
