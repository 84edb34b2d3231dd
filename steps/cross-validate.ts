import type { FeatureStep, ModelKind } from '../runner/recipe-types.js';
import type { FrameOutput, StepDefinition } from '../runner/step-types.js';
import { applyDesign, learnDesign, targetOf } from './design.js';
import type { FoldsOutput } from './folds.js';
import type { HoldoutOutput } from './holdout.js';
import { modelKinds, type Cell } from './model-kinds.js';

export interface CrossValidateParams {
  model: string;
  kind: ModelKind;
  cell: Cell;
  target: string;
  predictors: string[];
  features: FeatureStep[];
}

/** Out-of-fold predictions of one grid cell: for each training row, the prediction of the fold that left it out. */
export interface CrossValidateOutput {
  cell: Cell;
  /** Aligned with the holdout's train rows. */
  predictions: number[];
  fold: number[];
  used: Record<string, unknown>[];
}

/**
 * Fits one grid cell once per fold on the other folds' rows and predicts the left-out fold. Learned
 * feature steps are fitted inside each fold's training rows, so no test row informs its own prediction.
 */
export const crossValidate: StepDefinition<CrossValidateParams, CrossValidateOutput> = {
  kind: 'cross_validate',
  version: 1,
  codec: 'json',
  usesSeed: true,
  async run(inputs, params, ctx) {
    const frame = (inputs[0] as FrameOutput).frame;
    const split = inputs[1] as HoldoutOutput;
    const folds = inputs[2] as FoldsOutput;
    const predictions = new Array<number>(split.train.length).fill(NaN);
    const used: Record<string, unknown>[] = [];
    for (let f = 0; f < folds.k; f++) {
      const fitRows: number[] = [];
      const testAt: number[] = [];
      split.train.forEach((r, k) => (folds.fold[k] === f ? testAt.push(k) : fitRows.push(r)));
      const testRows = testAt.map((k) => split.train[k]);
      const design = learnDesign(frame, fitRows, params.features, params.predictors);
      const x = applyDesign(design, frame, fitRows);
      const y = targetOf(frame, params.target, fitRows);
      const adapter = modelKinds[params.kind];
      const fitted = await adapter.fit(x, y, params.cell, { seed: ctx.seedFor('fit', f), workers: ctx.workers });
      const p = await adapter.predict(fitted.bytes, applyDesign(design, frame, testRows));
      testAt.forEach((k, j) => (predictions[k] = p[j]));
      used.push(fitted.used);
      ctx.progress((f + 1) / folds.k);
    }
    return { cell: params.cell, predictions, fold: folds.fold, used };
  },
  summary: (o) => `${o.used.length} folds`,
};
