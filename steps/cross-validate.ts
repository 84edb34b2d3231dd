import type { FeatureStep, ModelKind } from '../runner/recipe-types.js';
import type { FrameOutput, StepDefinition } from '../runner/step-types.js';
import { applyDesign, learnDesign, targetOf, type LearnedDesign } from './design.js';
import { foldRows, type FoldsOutput } from './folds.js';
import { column } from '../runner/frame.js';
import type { HoldoutOutput } from './holdout.js';
import { modelKinds, type Cell } from './model-kinds.js';

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
}

/**
 * Fits one grid cell once per fold on the other folds' rows and predicts the left-out fold. Learned
 * feature steps are fitted inside each fold's training rows, so no test row informs its own prediction.
 */
export const crossValidate: StepDefinition<CrossValidateParams, CrossValidateOutput> = {
  kind: 'cross_validate',
  version: 2,
  codec: 'json',
  usesSeed: true,
  parallel: true,
  async run(inputs, params, ctx) {
    const frame = (inputs[0] as FrameOutput).frame;
    const split = inputs[1] as HoldoutOutput;
    const folds = inputs[2] as FoldsOutput;
    const predictions = new Array<number | null>(split.train.length).fill(null);
    const used: Record<string, unknown>[] = [];
    const learned: LearnedDesign[] = [];
    const times = params.time ? (column(frame, params.time).values as Float64Array) : null;
    for (let f = 0; f < folds.k; f++) {
      const { fit: fitAt, test: testAt } = foldRows(folds, f, (k) => (times ? times[split.train[k]] : NaN));
      const fitRows = fitAt.map((k) => split.train[k]);
      const testRows = testAt.map((k) => split.train[k]);
      const design = learnDesign(frame, fitRows, params.features, params.predictors);
      const x = applyDesign(design, frame, fitRows);
      const y = targetOf(frame, params.target, fitRows);
      const adapter = modelKinds[params.kind];
      const fitted = await adapter.fit(x, y, params.cell, { seed: ctx.seedFor('fit', f), workers: ctx.workers });
      const p = await adapter.predict(fitted.bytes, applyDesign(design, frame, testRows));
      testAt.forEach((k, j) => (predictions[k] = p[j]));
      used.push(fitted.used);
      learned.push(design);
      ctx.progress((f + 1) / folds.k);
    }
    return { cell: params.cell, predictions, fold: folds.fold, used, learned };
  },
  summary: (o) => `${o.used.length} folds`,
};
