import type { FeatureStep, ModelKind } from '../core/recipe-types.js';
import type { FrameOutput, StepContext, StepDefinition } from '../core/step-types.js';
import { canonicalJson } from '../core/hash.js';
import { column, type Frame } from '../core/frame.js';
import type { ChooseOutput } from './choose.js';
import { applyDesign, learnDesign, targetOf, type LearnedDesign } from './design.js';
import type { HoldoutOutput } from './holdout.js';
import { engineFor, type Cell, type FittedModel } from './model-kinds.js';
import { dict } from '../core/dict.js';
import { bytesOf, float64Bytes, type Bytes } from '../core/codec.js';

export interface FitParams {
  model: string;
  kind: ModelKind;
  target: string;
  predictors: string[];
  features: FeatureStep[];
  /**
   * The model's only grid cell, when its grid has one: then there is nothing to choose and the fit
   * has no choose input, so it need not wait for cross-validation. Absent otherwise.
   */
  cell?: Cell;
}

export interface FitOutput {
  model: string;
  kind: ModelKind;
  cell: Cell;
  used: Record<string, unknown>;
  design: LearnedDesign;
  /**
   * The model's predictions of the training rows, in the holdout's train order, as the bytes of a
   * Float64Array (read them with float64sOf): in-sample, so never a measure of skill. A forest
   * gathers them as it grows, which spares the score step predicting every training row.
   */
  trainingPredictions: Uint8Array;
  /** The serialized engine model (kept as raw bytes by the record codec, not as text). */
  bytes: Uint8Array;
  oobR2: number | null;
  trainingRows: number;
  /** Range of each numeric predictor over the training rows: outside it, a tree model cannot extrapolate. */
  ranges: Record<string, { min: number; max: number }>;
}

/**
 * The output as the step makes it: the model's bytes may be a writer (a forest's, written straight
 * into the step's entry: see BytesWriter). Steps downstream read it decoded, as FitOutput.
 */
export type FitMade = Omit<FitOutput, 'bytes'> & { bytes: Bytes };

const WHERE = 'final fit on all training rows';

/**
 * The engine's seed for the final fit: from the training table and split (the step's seedInputs)
 * and the chosen cell itself, not from which cells the grid held besides it.
 */
function fitSeed(ctx: StepContext, cell: Cell): string {
  return ctx.seedFor(`fit ${canonicalJson(cell)}`);
}

/** What the final fit works on: the chosen cell, the features learned on the training rows, and the training matrix and target. */
function prepare(inputs: unknown[], params: FitParams) {
  const frame = (inputs[0] as FrameOutput).frame;
  const split = inputs[1] as HoldoutOutput;
  const cell = params.cell ?? chosenCell(inputs[2] as ChooseOutput);
  const design = learnDesign(frame, split.train, params.features, params.predictors);
  const x = applyDesign(design, frame, split.train);
  const y = targetOf(frame, params.target, split.train);
  return { frame, split, cell, design, x, y };
}

/** The step's output from the fitted model, with its predictions of the training rows (made here when the fit has none). */
async function output(p: ReturnType<typeof prepare>, params: FitParams, fitted: FittedModel): Promise<FitMade> {
  const trainingPredictions = fitted.trainingPredictions ?? (await engineFor(params.kind, params.model).predict(bytesOf(fitted.bytes), p.x, WHERE));
  return {
    model: params.model,
    kind: params.kind,
    cell: p.cell,
    used: fitted.used,
    design: p.design,
    // before the model's bytes: 8 bytes a row, so the model's arrays stay at a multiple of 8 (views, not copies)
    trainingPredictions: float64Bytes(trainingPredictions),
    bytes: fitted.bytes,
    oobR2: fitted.oobR2 ?? null,
    trainingRows: p.split.train.length,
    ranges: trainingRanges(p.frame, params.predictors, p.split.train),
  };
}

/** The engine's blocks for a kind that has them; the runner divides only steps whose divide said more than one part. */
function blocksOf(params: FitParams) {
  const blocks = engineFor(params.kind, params.model).blocks;
  if (!blocks) throw new Error(`internal: model kind ${params.kind} does not fit in blocks`);
  return blocks;
}

/**
 * Refits a model's chosen cell on all training rows (never the holdout), with features learned on
 * the same rows. A forest's fit divides into blocks of trees that the Slurm executor may grow as
 * separate tasks; merged, they give the bytes of the whole fit.
 */
export const fit: StepDefinition<FitParams, FitMade> = {
  kind: 'fit',
  // (the version is in the seed of its draws: the switch to the record codec, which changed no
  // number, kept 4) 4: seeded from the training table, the split and the chosen cell only (seedInputs), so an
  // unchosen grid value changes nothing; standardize learns on the values an impute step fills; 3: collinear linear predictors are left out (listed in
  // used); engine errors become messages
  version: 4,
  codec: 'record',
  usesSeed: true,
  seedInputs: [0, 1],
  // the cell is in fitSeed's purpose
  seedOmits: ['cell'],
  parallel: true,
  async run(inputs, params, ctx) {
    const p = prepare(inputs, params);
    const fitted = await engineFor(params.kind, params.model).fit(p.x, p.y, p.cell, { seed: fitSeed(ctx, p.cell), workers: ctx.workers }, WHERE);
    return output(p, params, fitted);
  },
  parts: {
    divide(inputs, params) {
      const rows = (inputs[1] as HoldoutOutput).train.length;
      const d = engineFor(params.kind, params.model).blocks?.divide(params.cell ?? chosenCell(inputs[2] as ChooseOutput), rows);
      return d ? { count: d.count, unit: d.unit, perPart: d.perBlock, total: d.total, work: d.work } : { count: 1, unit: 'fits', perPart: 1, total: 1, work: 0 };
    },
    async run(inputs, params, ctx, first, end) {
      const p = prepare(inputs, params);
      return blocksOf(params).grow(p.x, p.y, p.cell, { seed: fitSeed(ctx, p.cell), workers: ctx.workers }, first, end, WHERE);
    },
    async merge(inputs, params, ctx, parts) {
      const p = prepare(inputs, params);
      return output(p, params, await blocksOf(params).assemble(p.x, p.y, p.cell, { seed: fitSeed(ctx, p.cell), workers: ctx.workers }, parts, WHERE));
    },
  },
  summary: (o) => `${o.trainingRows.toLocaleString('en')} training rows`,
};

/** The cell a choose step chose. */
export function chosenCell(chosen: ChooseOutput): Cell {
  return chosen.cells[chosen.chosen].cell;
}

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
