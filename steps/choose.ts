import { metrics, type MetricSet } from '../models/metrics.js';
import { messages } from '../core/messages.js';
import type { FrameOutput, StepDefinition } from '../core/step-types.js';
import { targetOf } from './design.js';
import type { CrossValidateOutput } from './cross-validate.js';
import type { HoldoutOutput } from './holdout.js';
import type { Cell } from './model-kinds.js';

export interface ChooseParams {
  target: string;
  choose_by: 'rmse' | 'mae' | 'r2';
  k: number;
}

/** A metric's mean and sample standard deviation across folds. */
export interface Spread {
  mean: number | null;
  sd: number | null;
}

export interface CellScore {
  cell: Cell;
  /** Metrics of the pooled out-of-fold predictions (label: cross-validated). */
  pooled: MetricSet;
  /** Per-fold metrics, then their mean ± sd. */
  perFold: { r2: Spread; rmse: Spread; mae: Spread; bias: Spread };
  used: Record<string, unknown>[];
  /** Why the cell's cross-validated score on the criterion is undefined, or null when it is defined. */
  failed: string | null;
}

export interface ChooseOutput {
  cells: CellScore[];
  /** The best cell with a defined score; 0 when every cell failed. */
  chosen: number;
  choose_by: 'rmse' | 'mae' | 'r2';
  /** Why the model failed: no cell has a defined cross-validated score on the criterion. Null when one has. */
  failed: string | null;
}

/**
 * Scores every cell of one model from its out-of-fold predictions and picks the best by the
 * recipe's criterion (lowest RMSE or MAE, highest R²); ties go to the earlier cell. The holdout
 * rows are never looked at here.
 */
export const choose: StepDefinition<ChooseParams, ChooseOutput> = {
  kind: 'choose',
  // 3: a cell whose score is undefined is marked failed and never chosen
  version: 3,
  codec: 'json',
  run(inputs, params) {
    const frame = (inputs[0] as FrameOutput).frame;
    const split = inputs[1] as HoldoutOutput;
    const cvs = inputs.slice(2) as CrossValidateOutput[];
    const y = targetOf(frame, params.target, split.train);
    const cells: CellScore[] = cvs.map((cv) => {
      // rows no fold tests (the first block of forward time folds) have no prediction
      const tested = cv.predictions.flatMap((p, k) => (p === null ? [] : [k]));
      const perFold = { r2: [] as number[], rmse: [] as number[], mae: [] as number[], bias: [] as number[] };
      for (let f = 0; f < params.k; f++) {
        const at = tested.filter((k) => cv.fold[k] === f);
        const m = metrics(
          at.map((k) => y[k]),
          at.map((k) => cv.predictions[k] as number),
        );
        for (const name of ['r2', 'rmse', 'mae', 'bias'] as const) {
          const v = m[name].value;
          if (v !== null) perFold[name].push(v);
        }
      }
      return {
        cell: cv.cell,
        pooled: metrics(
          tested.map((k) => y[k]),
          tested.map((k) => cv.predictions[k] as number),
        ),
        perFold: {
          r2: spread(perFold.r2),
          rmse: spread(perFold.rmse),
          mae: spread(perFold.mae),
          bias: spread(perFold.bias),
        },
        used: cv.used,
        failed: null as string | null,
      };
    });
    cells.forEach((c, i) => {
      const m = c.pooled[params.choose_by];
      // metrics() returns null with the reason for anything not finite (or R² of a constant target)
      const nonFinite = cvs[i].nonFinite;
      c.failed = nonFinite ?? (m.value === null ? (m.reason ?? 'no value') : null);
      // the JSON form holds a non-finite prediction as null, so the scores above silently skipped it
      if (nonFinite) {
        for (const k of ['r2', 'rmse', 'mae', 'bias'] as const) {
          c.pooled[k] = { value: null, reason: nonFinite };
          c.perFold[k] = { mean: null, sd: null };
        }
      }
    });
    let chosen = 0;
    cells.forEach((c, i) => {
      if (better(c.pooled, cells[chosen].pooled, params.choose_by)) chosen = i;
    });
    const failed = cells.every((c) => c.failed !== null) ? messages.modelScoreNotFinite(METRIC_WORDS[params.choose_by], cells[0].failed!) : null;
    return { cells, chosen, choose_by: params.choose_by, failed };
  },
  summary: (o) => (o.failed ? 'failed: no cell has a defined score' : `${o.cells.length} cell${o.cells.length === 1 ? '' : 's'}, chose #${o.chosen + 1}`),
};

/** How each choosing metric is named in messages. */
export const METRIC_WORDS: Record<'rmse' | 'mae' | 'r2', string> = { rmse: 'RMSE', mae: 'MAE', r2: 'R²' };

/** Whether metric set a beats b on the criterion; an undefined value never wins. */
export function better(a: MetricSet, b: MetricSet, by: 'rmse' | 'mae' | 'r2'): boolean {
  const av = a[by].value;
  const bv = b[by].value;
  if (av === null) return false;
  if (bv === null) return true;
  return by === 'r2' ? av > bv : av < bv;
}

function spread(v: number[]): Spread {
  if (v.length === 0) return { mean: null, sd: null };
  const m = v.reduce((a, b) => a + b, 0) / v.length;
  const sd = v.length > 1 ? Math.sqrt(v.reduce((s, x) => s + (x - m) ** 2, 0) / (v.length - 1)) : null;
  return { mean: m, sd };
}
