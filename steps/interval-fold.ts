import { canonicalJson } from '../core/hash.js';
import { messages } from '../core/messages.js';
import type { StepDefinition } from '../core/step-types.js';
import type { ChooseOutput } from './choose.js';
import { chosenCell } from './fit.js';
import { fitFold, type CrossValidateParams } from './cross-validate.js';
import type { LearnedDesign } from './design.js';
import type { FoldsOutput } from './folds.js';
import type { HoldoutOutput } from './holdout.js';
import { cellLabel, type Cell } from './model-kinds.js';
import { targetOf } from './design.js';
import type { FrameOutput } from '../core/step-types.js';
import type { Bytes } from '../core/codec.js';

/** `cell` as for a fit: present when the model's grid has only that cell, and then there is no choose input. */
export type IntervalFoldParams = Omit<CrossValidateParams, 'cell'> & { fold: number; cell?: Cell };

/** One fold model of a model's chosen cell, kept for its prediction intervals. */
export interface IntervalFoldOutput {
  fold: number;
  cell: Cell;
  /** Positions in the holdout's train rows that this fold tests, ascending. */
  tested: number[];
  /** |observed − predicted| of those rows, in the same order. */
  residuals: number[];
  /** The fold model's predictions of the holdout rows, in holdout order. */
  holdout: number[];
  /** What the learned feature steps took from this fold's fitting rows. */
  design: LearnedDesign;
  /** The fold model's engine bytes, so `predict` can give new rows their intervals. */
  bytes: Uint8Array;
  /** The first prediction that was not a finite number, described; null when all were (then no interval is given). */
  nonFinite: string | null;
}

/**
 * The output as the step makes it: a forest's bytes are a writer, written straight into the step's
 * entry (see BytesWriter). Steps downstream read it decoded, as IntervalFoldOutput.
 */
export type IntervalFoldMade = Omit<IntervalFoldOutput, 'bytes'> & { bytes: Bytes };

/**
 * Fits a model's chosen cell on every fold but one, like cross-validation does, and keeps the fold
 * model: its residuals on the fold it left out and its predictions of the holdout rows are what the
 * CV+ prediction intervals are made of (see models/conformal.ts). Seeded from the table, the split,
 * the folds and the chosen cell, so an unchosen grid value changes nothing here.
 */
export const intervalFold: StepDefinition<IntervalFoldParams, IntervalFoldMade> = {
  kind: 'interval_fold',
  // the version is in the seed of its draws: the switch to the record codec, which changed no number, kept 1
  version: 1,
  codec: 'record',
  usesSeed: true,
  seedInputs: [0, 1, 2],
  // the cell is in the draw purpose
  seedOmits: ['cell'],
  parallel: true,
  async run(inputs, params, ctx) {
    const frame = (inputs[0] as FrameOutput).frame;
    const split = inputs[1] as HoldoutOutput;
    const folds = inputs[2] as FoldsOutput;
    const cell = params.cell ?? chosenCell(inputs[3] as ChooseOutput);
    const f = params.fold;
    const where = `prediction-interval fold ${f + 1} of ${folds.k}, ${cellLabel(cell)}`;
    const fold = await fitFold(inputs, params, cell, f, ctx.seedFor(`interval fold ${canonicalJson(cell)}`, f), ctx.workers, where);
    const tested = await fold.predict(fold.testRows, where);
    const observed = targetOf(frame, params.target, fold.testRows);
    const holdout = await fold.predict(split.test, where);
    const bad = [...tested, ...holdout].find((v) => !Number.isFinite(v));
    return {
      fold: f,
      cell,
      tested: fold.testAt,
      residuals: Array.from(tested, (p, i) => Math.abs(observed[i] - p)),
      holdout: Array.from(holdout),
      design: fold.design,
      bytes: fold.bytes,
      nonFinite: bad === undefined ? null : messages.predictionNotFinite(bad, where),
    };
  },
  summary: (o) => `${o.tested.length} residuals`,
};
