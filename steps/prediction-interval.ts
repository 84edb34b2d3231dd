import { column } from '../core/frame.js';
import type { TargetScale } from '../core/recipe-types.js';
import type { FrameOutput, StepDefinition } from '../core/step-types.js';
import { conformalTable, cvPlus, unitsNeeded, type ConformalTable } from '../models/conformal.js';
import { targetOf } from './design.js';
import type { HoldoutOutput } from './holdout.js';
import type { IntervalFoldOutput } from './interval-fold.js';
import { TARGET_SCALES } from './target-scale.js';
import { BLOCK_COLUMN } from './split-util.js';

export interface PredictionIntervalParams {
  level: number;
  target: string;
  targetScale: TargetScale | null;
  /** The column the holdout's coverage is counted by: the recipe's groups, else its spatial blocks; null for neither. */
  groups: string | null;
  /**
   * The column of the units the folds hold out whole (groups, or spatial blocks): each then counts
   * once, and the interval is for a row of a new unit; null for folds of rows.
   */
  units: string | null;
}

/** How often the holdout rows fell inside their intervals. */
export interface Coverage {
  rows: number;
  inside: number;
  share: number;
  /** Mean of high − low on the model's scale. */
  meanWidth: number;
  /** With a target scale, the mean width after back-transforming both bounds; else null. */
  meanWidthOriginal: number | null;
  /** Per holdout group (when the recipe names groups), in order of first appearance. */
  byGroup: { group: string; rows: number; inside: number }[];
}

export interface PredictionIntervalOutput {
  level: number;
  method: 'cv+';
  /** What the residuals count as: whole groups or blocks (the units the folds hold out), or rows. */
  unitKind: 'groups' | 'blocks' | 'rows';
  units: number;
  /** Why the model has no intervals, or null when it has. */
  reason: string | null;
  /** The fold residuals, sorted and weighted, for `predict`; null without intervals. */
  table: ConformalTable | null;
  /** Each holdout row's interval, in holdout order; null without intervals. */
  holdout: { low: number[]; high: number[] } | null;
  coverage: Coverage | null;
}

/**
 * Gathers a model's interval folds (inputs: the model table, the holdout, then one interval_fold
 * output per fold, in fold order) into CV+ prediction intervals and measures on the holdout rows,
 * which no fold model saw, how many of them fall inside.
 */
export const predictionInterval: StepDefinition<PredictionIntervalParams, PredictionIntervalOutput> = {
  kind: 'prediction_interval',
  version: 1,
  codec: 'json',
  run(inputs, params) {
    const frame = (inputs[0] as FrameOutput).frame;
    const split = inputs[1] as HoldoutOutput;
    const folds = inputs.slice(2) as IntervalFoldOutput[];
    const valuesOf = (name: string | null) => (name ? column(frame, name).values : null);
    const groupValues = valuesOf(params.groups);
    const unitValues = valuesOf(params.units);
    const table = conformalTable(folds.map((f) => ({ residuals: f.residuals, groups: unitValues ? f.tested.map((k) => String(unitValues[split.train[k]])) : null })));
    const unitKind = params.units === BLOCK_COLUMN ? ('blocks' as const) : params.units ? ('groups' as const) : ('rows' as const);
    const base = { level: params.level, method: 'cv+' as const, unitKind, units: table.units };
    const nonFinite = folds.find((f) => f.nonFinite !== null)?.nonFinite;
    const reason =
      nonFinite ? `a fold model ${nonFinite.replace(/^it /, '')}`
      : table.units < unitsNeeded(params.level) ?
        `${table.units} ${unitKind} with out-of-fold residuals; a ${percent(params.level)} interval needs at least ${unitsNeeded(params.level)}`
      : null;
    if (reason) return { ...base, reason, table: null, holdout: null, coverage: null };
    const low: number[] = [];
    const high: number[] = [];
    const mu = new Float64Array(folds.length);
    split.test.forEach((_, i) => {
      folds.forEach((f, k) => (mu[k] = f.holdout[i]));
      const b = cvPlus(table, mu, params.level)!;
      low.push(b.low);
      high.push(b.high);
    });
    const y = targetOf(frame, params.target, split.test);
    return { ...base, reason: null, table, holdout: { low, high }, coverage: coverage(y, low, high, params, groupValues ? split.test.map((r) => String(groupValues[r])) : null) };
  },
  summary: (o) => (o.coverage ? `${(100 * o.coverage.share).toFixed(1)}% of holdout rows inside` : `no intervals: ${o.reason}`),
};

function percent(level: number): string {
  return `${+(100 * level).toFixed(2)}%`;
}

function coverage(y: Float64Array, low: number[], high: number[], params: PredictionIntervalParams, groups: string[] | null): Coverage {
  let inside = 0;
  let width = 0;
  let widthOriginal = 0;
  const back = params.targetScale ? TARGET_SCALES[params.targetScale].inverse : null;
  const byGroup = new Map<string, { group: string; rows: number; inside: number }>();
  y.forEach((v, i) => {
    const hit = v >= low[i] && v <= high[i];
    if (hit) inside++;
    width += high[i] - low[i];
    if (back) widthOriginal += back(high[i]) - back(low[i]);
    if (groups) {
      const g = byGroup.get(groups[i]) ?? byGroup.set(groups[i], { group: groups[i], rows: 0, inside: 0 }).get(groups[i])!;
      g.rows++;
      if (hit) g.inside++;
    }
  });
  const n = y.length;
  return {
    rows: n,
    inside,
    share: n > 0 ? inside / n : 0,
    meanWidth: n > 0 ? width / n : 0,
    meanWidthOriginal: back && n > 0 ? widthOriginal / n : null,
    byGroup: [...byGroup.values()],
  };
}
