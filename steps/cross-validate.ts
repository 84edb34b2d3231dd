import type { FeatureStep, ModelKind } from '../core/recipe-types.js';
import type { FrameOutput, StepDefinition } from '../core/step-types.js';
import { applyDesign, learnDesign, targetOf, type LearnedDesign } from './design.js';
import { foldRows, type FoldsOutput } from './folds.js';
import { column, type Frame } from '../core/frame.js';
import { DendrologError, messages } from '../core/messages.js';
import type { HoldoutOutput } from './holdout.js';
import { cellLabel, engineFor, type Cell } from './model-kinds.js';

export interface CrossValidateParams {
  model: string;
  kind: ModelKind;
  cell: Cell;
  target: string;
  predictors: string[];
  features: FeatureStep[];
  time: string | null;
}

/** Out-of-fold predictions of one grid cell: for each training row, the prediction of the fold that left it out. */
export interface CrossValidateOutput {
  cell: Cell;
  /** Aligned with the holdout's train rows; null where no fold tests the row (forward time folds). */
  predictions: (number | null)[];
  fold: number[];
  used: Record<string, unknown>[];
  /** What the learned feature steps took from each fold's training rows. */
  learned: LearnedDesign[];
  /**
   * The first prediction that was not a finite number, described; null when all were. Kept apart
   * because the JSON form of the predictions holds such values as null, like untested rows.
   */
  nonFinite: string | null;
}

/** One fold of one grid cell: fitted on the other folds' training rows, predicting this fold's. */
export interface CvFoldOutput {
  fold: number;
  /** Positions in the holdout's train rows that this fold tests, ascending. */
  tested: number[];
  /** The predictions for those rows, in the same order (a non-finite one is held as null: see nonFinite). */
  predictions: (number | null)[];
  used: Record<string, unknown>;
  /** What the learned feature steps took from this fold's fitting rows. */
  learned: LearnedDesign;
  /** The first prediction that was not a finite number, described; null when all were. */
  nonFinite: string | null;
}

/**
 * Fits one grid cell on every fold but one and predicts the one left out: the unit of work of
 * cross-validation, so that a grid's cells × folds can run side by side (on threads, or as tasks
 * of a cluster job array). Learned feature steps are fitted inside the fold's fitting rows only,
 * so no test row informs its own prediction.
 */
export const cvFold: StepDefinition<CrossValidateParams & { fold: number }, CvFoldOutput> = {
  kind: 'cv_fold',
  // 2: standardize learns on the values an impute step fills
  version: 2,
  codec: 'json',
  usesSeed: true,
  parallel: true,
  async run(inputs, params, ctx) {
    const folds = inputs[2] as FoldsOutput;
    const f = params.fold;
    const where = `cross-validation fold ${f + 1} of ${folds.k}, ${cellLabel(params.cell)}`;
    const fold = await fitFold(inputs, params, params.cell, f, ctx.seedFor('fit', f), ctx.workers, where);
    const testAt = fold.testAt;
    const p = await fold.predict(fold.testRows, where);
    const bad = p.findIndex((v) => !Number.isFinite(v));
    return {
      fold: f,
      tested: testAt,
      predictions: Array.from(p, (v) => (Number.isFinite(v) ? v : null)),
      used: fold.used,
      learned: fold.design,
      nonFinite: bad >= 0 ? messages.predictionNotFinite(p[bad], `cross-validation fold ${f + 1}`) : null,
    };
  },
  summary: (o) => `${o.tested.length} rows predicted`,
};

/**
 * Fits one cell on every fold of the training rows but fold `f` (inputs: the model table, the
 * holdout, the folds), with the learned feature steps fitted on those rows only; says which
 * training positions the fold tests and predicts any rows with the fold's own design. A forest
 * predicts from memory, and its bytes come as a writer: made only when an output keeps them, and
 * then straight into the step's entry.
 */
export async function fitFold(inputs: unknown[], params: Omit<CrossValidateParams, 'cell'>, cell: Cell, f: number, seed: string, workers: number, where: string) {
  const frame = (inputs[0] as FrameOutput).frame;
  const split = inputs[1] as HoldoutOutput;
  const folds = inputs[2] as FoldsOutput;
  const constant = constantPredictors(frame, params.predictors, split.train);
  if (params.predictors.length > 0 && constant.length === params.predictors.length) {
    throw new DendrologError(messages.predictorsAllConstant(constant), 1);
  }
  const times = params.time ? (column(frame, params.time).values as Float64Array) : null;
  const { fit: fitAt, test: testAt } = foldRows(folds, f, (k) => (times ? times[split.train[k]] : NaN));
  const fitRows = fitAt.map((k) => split.train[k]);
  const design = learnDesign(frame, fitRows, params.features, params.predictors);
  const engine = engineFor(params.kind, params.model);
  const x = applyDesign(design, frame, fitRows);
  const y = targetOf(frame, params.target, fitRows);
  const model = await engine.fitToPredict(x, y, cell, { seed, workers }, where);
  return {
    testAt,
    testRows: testAt.map((k) => split.train[k]),
    design,
    used: model.used,
    bytes: model.bytes,
    /** The fold model's predictions for some rows of the model table. */
    predict: (rows: number[], at: string) => model.predict(applyDesign(design, frame, rows), at),
  };
}

/**
 * Out-of-fold predictions of one grid cell, gathered from its folds (inputs: the holdout, the
 * folds, then one cv_fold output per fold, in fold order): for each training row, the prediction of
 * the fold that left it out.
 */
export const crossValidate: StepDefinition<{ cell: Cell }, CrossValidateOutput> = {
  kind: 'cross_validate',
  // 4: gathers its folds, each now a cv_fold step of its own (so a fold's random draws follow that step)
  version: 4,
  codec: 'json',
  run(inputs, params) {
    const split = inputs[0] as HoldoutOutput;
    const folds = inputs[1] as FoldsOutput;
    const parts = inputs.slice(2) as CvFoldOutput[];
    const predictions = new Array<number | null>(split.train.length).fill(null);
    let nonFinite: string | null = null;
    for (const part of parts) {
      part.tested.forEach((k, j) => (predictions[k] = part.predictions[j]));
      nonFinite ??= part.nonFinite;
    }
    return { cell: params.cell, predictions, fold: folds.fold, used: parts.map((p) => p.used), learned: parts.map((p) => p.learned), nonFinite };
  },
  summary: (o) => `${o.used.length} folds`,
};

/**
 * The predictors that hold a single value over the given rows (missing values aside; a column with
 * no value at all is not listed): no model can learn from them.
 *
 * Example: `constantPredictors(frame, ['x1', 'x2'], train)` is `['x2']` when x2 is 4 on every training row.
 */
export function constantPredictors(frame: Frame, predictors: string[], rows: number[]): string[] {
  return predictors.filter((p) => {
    const values = column(frame, p).values;
    let first: unknown;
    for (const r of rows) {
      const v = values[r];
      if (v === null || (typeof v === 'number' && Number.isNaN(v))) continue;
      if (first === undefined) first = v;
      else if (v !== first) return false;
    }
    // a column missing on every row is not "constant": the missing-value checks speak for it
    return first !== undefined;
  });
}
