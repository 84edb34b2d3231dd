import type { FeatureStep, ModelKind } from '../core/recipe-types.js';
import type { FrameOutput, StepDefinition } from '../core/step-types.js';
import { column, type Frame } from '../core/frame.js';
import type { ChooseOutput } from './choose.js';
import { applyDesign, learnDesign, targetOf, type LearnedDesign } from './design.js';
import type { HoldoutOutput } from './holdout.js';
import { engineFor, type Cell } from './model-kinds.js';
import { dict } from '../core/dict.js';

export interface FitParams {
  model: string;
  kind: ModelKind;
  target: string;
  predictors: string[];
  features: FeatureStep[];
}

export interface FitOutput {
  model: string;
  kind: ModelKind;
  cell: Cell;
  used: Record<string, unknown>;
  design: LearnedDesign;
  /** The serialized engine model, base64. */
  bytes: string;
  oobR2: number | null;
  trainingRows: number;
  /** Range of each numeric predictor over the training rows: outside it, a tree model cannot extrapolate. */
  ranges: Record<string, { min: number; max: number }>;
}

/** Refits a model's chosen cell on all training rows (never the holdout), with features learned on the same rows. */
export const fit: StepDefinition<FitParams, FitOutput> = {
  kind: 'fit',
  // 3: collinear linear predictors are left out (listed in used); engine errors become messages
  version: 3,
  codec: 'json',
  usesSeed: true,
  parallel: true,
  async run(inputs, params, ctx) {
    const frame = (inputs[0] as FrameOutput).frame;
    const split = inputs[1] as HoldoutOutput;
    const chosen = inputs[2] as ChooseOutput;
    const cell = chosen.cells[chosen.chosen].cell;
    const design = learnDesign(frame, split.train, params.features, params.predictors);
    const x = applyDesign(design, frame, split.train);
    const y = targetOf(frame, params.target, split.train);
    const fitted = await engineFor(params.kind, params.model).fit(x, y, cell, { seed: ctx.seedFor('fit'), workers: ctx.workers }, 'final fit on all training rows');
    return {
      model: params.model,
      kind: params.kind,
      cell,
      used: fitted.used,
      design,
      bytes: Buffer.from(fitted.bytes).toString('base64'),
      oobR2: fitted.oobR2 ?? null,
      trainingRows: split.train.length,
      ranges: trainingRanges(frame, params.predictors, split.train),
    };
  },
  summary: (o) => `${o.trainingRows.toLocaleString('en')} training rows`,
};

/** Min and max of each numeric predictor over some rows (missing values skipped). */
export function trainingRanges(frame: Frame, predictors: string[], rows: number[]): Record<string, { min: number; max: number }> {
  const out = dict<{ min: number; max: number }>();
  for (const p of predictors) {
    const c = column(frame, p);
    if (!(c.values instanceof Float64Array)) continue;
    let min = Infinity;
    let max = -Infinity;
    for (const r of rows) {
      const v = c.values[r];
      if (v < min) min = v;
      if (v > max) max = v;
    }
    if (min <= max) out[p] = { min, max };
  }
  return out;
}
