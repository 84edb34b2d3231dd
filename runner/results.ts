import type { MetricSet } from '../models/metrics.js';
import type { ChooseOutput } from '../steps/index.js';
import type { CrossValidateOutput } from '../steps/index.js';
import type { FitOutput } from '../steps/index.js';
import type { FoldsOutput } from '../steps/index.js';
import type { HeadlineOutput } from '../steps/index.js';
import type { HoldoutOutput } from '../steps/index.js';
import { cellLabel, profileFrame } from '../steps/index.js';
import type { ColumnProfile } from '../steps/index.js';
import type { ScoreOutput } from '../steps/index.js';
import type { IntervalFoldOutput, PredictionIntervalOutput } from '../steps/index.js';
import type { ExplainOutput } from '../steps/index.js';
import type { Execution } from './execute.js';
import type { FittedModel } from './model-file.js';
import type { Plan } from './plan.js';
import type { Blocks, ModelKind, Recipe } from '../core/recipe-types.js';
import type { FrameOutput, Warning } from '../core/step-types.js';
import { WarningLog } from '../core/warnings.js';
import { column, type Frame } from '../core/frame.js';

export interface SourceResult {
  name: string;
  file: string;
  sha256: string;
  /** SHA-256 of the parsed table: equal tables, equal hashes, whatever the file's format or layout. */
  tableSha256: string | null;
  rows: number;
  /** Each column's profile, with its units where the file states them (NetCDF `units`). */
  columns: (ColumnProfile & { units?: string })[];
}

export interface ModelResult {
  name: string;
  kind: ModelKind;
  chooseBy: string;
  cells: ChooseOutput['cells'];
  chosen: number;
  chosenLabel: string;
  used: Record<string, unknown>;
  oobR2: number | null;
  holdout: MetricSet;
  intervals: ScoreOutput['intervals'];
  /** With a target scale, holdout RMSE, MAE and bias on the original quantity's scale. */
  original: ScoreOutput['original'];
  training: MetricSet;
  /** Cross-validated metrics of the chosen cell (pooled out-of-fold). */
  crossValidated: MetricSet;
  /** 1 − MSE(model) / MSE(baseline) on the holdout, per baseline model present. */
  skill: Record<string, number | null>;
  /** Why a skill score is undefined, per baseline whose skill is null. */
  skillReasons: Record<string, string>;
  /** Why the model cannot be compared (its cross-validated score is undefined), or null. */
  failed: string | null;
  /** Permutation importance (holdout rows) and partial dependence (training rows); none for mean. */
  explain: ExplainOutput | null;
  /** CV+ prediction intervals and their coverage of the holdout rows; null when the recipe turns them off. */
  predictionInterval: Omit<PredictionIntervalOutput, 'table' | 'holdout'> | null;
  learned: { final: FitOutput['design']; folds: FitOutput['design'][] };
}

/** Everything the report and manifest say about a run, gathered from step outputs. */
/** A row's time (a number, or milliseconds since 1970 for a date) and its residual. */
export interface TimedResidual {
  t: number;
  residual: number;
}

export interface Results {
  sources: SourceResult[];
  cleaning: { id: string; rowsIn: number; rowsOut: number; detail: string }[];
  holdout: {
    by: string;
    fraction: number;
    train: number;
    test: number;
    trainGroups: number;
    testGroups: number;
    cutoff: number | null;
    /** Why the holdout intervals are unreliable (too few groups or rows), or null. */
    unreliable: string | null;
    /** The holdout as whole units (groups, or rows by their values), to compare runs by. */
    units: HoldoutOutput['units'];
  };
  folds: { k: number; by: string; gap: number };
  models: ModelResult[];
  /** The model with the best cross-validated score; its holdout score is the headline. */
  chosenModel: string;
  warnings: Warning[];
  /** Holdout observations and the chosen model's predictions, for the plots. */
  holdoutRows: { observed: number[]; predicted: number[]; groups: string[] | null };
  /** Every model's final fit and, with prediction intervals, its fold models and residual table, in recipe order: for the model file. */
  fitted: FittedModel[];
  /**
   * With spatial blocks, each modelling row's place and side ('holdout', or its fold), for the map;
   * every step-th row in model-table order when there are many. Null without blocks.
   */
  splitMap: { points: { x: number; y: number; set: string }[]; step: number; rows: number } | null;
  /**
   * With a declared time column, the headline model's residuals (observed − predicted) over time:
   * holdout rows by the final fit, training rows by the fold model that did not see them (rows no
   * fold tests are left out). Null without a time column.
   */
  /** The table every model saw, after cleaning and the row-wise features, before the learned ones. */
  modelTable: { rows: number; columns: ColumnProfile[] };
  timeResiduals: { time: string; date: boolean; holdout: TimedResidual[]; outOfFold: TimedResidual[] } | null;
  /** The headline model's fold models and CV+ table, for the model file; null without prediction intervals. */
  headlineInterval: { output: PredictionIntervalOutput; folds: IntervalFoldOutput[] } | null;
  /** The headline model's prediction for every modelling row, in model-table order; holdout rows with their prediction interval. */
  predictions: { row: number; set: 'training' | 'holdout'; observed: number; predicted: number; low?: number; high?: number }[];
}

/**
 * Gathers results from the executed plan: the headline step has chosen the model, scored each
 * model's skill and listed the evaluation's warnings, which follow the steps' own.
 *
 * Example: `gatherResults(recipe, plan, execution).chosenModel === 'forest'`
 */
export function gatherResults(recipe: Recipe, plan: Plan, exec: Execution): Results {
  const out = (id: string) => exec.outputs.get(id);
  const sources: SourceResult[] = Object.entries(plan.sources).map(([name, id]) => {
    const step = plan.steps.find((s) => s.id === id)!;
    const o = out(id) as FrameOutput;
    const extra = o.notes.extra as { profile: ColumnProfile[]; tableSha256?: string; units?: Record<string, string> };
    return {
      name,
      file: recipe.sources[name].file,
      sha256: (step.params as { sha256: string }).sha256,
      tableSha256: extra.tableSha256 ?? null,
      rows: o.frame.rows,
      columns: extra.profile.map((c) => (extra.units?.[c.name] ? { ...c, units: extra.units[c.name] } : c)),
    };
  });
  const cleaning = plan.dataSteps.slice(1).map((id) => {
    const n = (out(id) as FrameOutput).notes;
    return { id, rowsIn: n.rowsIn, rowsOut: n.rowsOut, detail: n.detail };
  });
  const split = out(plan.holdout) as HoldoutOutput;
  const folds = out(plan.folds) as FoldsOutput;
  const headline = out(plan.headline) as HeadlineOutput;
  const skills = new Map(headline.models.map((m) => [m.name, m]));
  const models: ModelResult[] = Object.entries(plan.models).map(([name, ids]) => {
    const chosen = out(ids.choose) as ChooseOutput;
    const fitted = out(ids.fit) as FitOutput;
    const score = out(ids.score) as ScoreOutput;
    const { skill, skillReasons } = skills.get(name)!;
    return {
      name,
      kind: recipe.models[name].kind,
      chooseBy: chosen.choose_by,
      cells: chosen.cells,
      chosen: chosen.chosen,
      chosenLabel: cellLabel(chosen.cells[chosen.chosen].cell),
      used: fitted.used,
      oobR2: fitted.oobR2,
      holdout: score.holdout,
      intervals: score.intervals,
      original: score.original,
      training: score.training,
      crossValidated: chosen.cells[chosen.chosen].pooled,
      skill,
      skillReasons,
      failed: chosen.failed,
      explain: ids.explain ? (out(ids.explain) as ExplainOutput) : null,
      predictionInterval: ids.interval ? withoutRows(out(ids.interval.gather) as PredictionIntervalOutput) : null,
      learned: { final: fitted.design, folds: (out(ids.cells[chosen.chosen]) as CrossValidateOutput).learned },
    };
  });
  // the steps' warnings first, then the evaluation's; a repeat of one merges into its first place
  const warnings = new WarningLog();
  for (const w of [...exec.warnings, ...headline.warnings]) warnings.add(w.code, w.message, w.count);
  const best = headline.chosen;
  const bestScore = out(plan.models[best].score) as ScoreOutput;
  const fitted: FittedModel[] = Object.values(plan.models).map((ids) => ({
    fit: out(ids.fit) as FitOutput,
    interval: ids.interval ? { output: out(ids.interval.gather) as PredictionIntervalOutput, folds: ids.interval.folds.map((id) => out(id) as IntervalFoldOutput) } : null,
  }));
  const headlineInterval = fitted[Object.keys(plan.models).indexOf(best)].interval;
  const bounds = headlineInterval?.output.holdout ?? null;
  const table = (out(plan.modelTable) as FrameOutput).frame;
  const targetValues = column(table, recipe.target).values as Float64Array;
  return {
    sources,
    cleaning,
    holdout: {
      cutoff: split.cutoff,
      by: split.by,
      fraction: recipe.evaluation.holdout.fraction,
      train: split.train.length,
      test: split.test.length,
      trainGroups: split.trainGroups,
      testGroups: split.testGroups,
      unreliable: headline.holdoutUnreliable,
      units: split.units,
    },
    folds: { k: folds.k, by: folds.by, gap: recipe.evaluation.folds.gap },
    models,
    chosenModel: best,
    warnings: warnings.list(),
    holdoutRows: { observed: bestScore.observed, predicted: bestScore.predictions, groups: bestScore.groups },
    fitted,
    headlineInterval,
    splitMap: recipe.blocks ? splitMap(table, recipe.blocks, split, folds) : null,
    modelTable: { rows: table.rows, columns: profileFrame(table) },
    timeResiduals: recipe.time
      ? timeResiduals(table, recipe.time, split, targetValues, bestScore.predictions, out(plan.models[best].cells[(out(plan.models[best].choose) as ChooseOutput).chosen]) as CrossValidateOutput)
      : null,
    predictions: [
      ...split.train.map((row, k) => ({ row, set: 'training' as const, observed: targetValues[row], predicted: bestScore.trainingPredictions[k] })),
      ...split.test.map((row, k) => ({ row, set: 'holdout' as const, observed: targetValues[row], predicted: bestScore.predictions[k], ...(bounds ? { low: bounds.low[k], high: bounds.high[k] } : {}) })),
    ].sort((a, b) => a.row - b.row),
  };
}

/** Residuals over the time column, for rows whose time and prediction are finite numbers. */
function timeResiduals(frame: Frame, time: string, split: HoldoutOutput, observed: Float64Array, holdoutPredictions: number[], cv: CrossValidateOutput): NonNullable<Results['timeResiduals']> {
  const col = column(frame, time);
  const t = col.values as Float64Array;
  const keep = (row: number, p: number | null): TimedResidual[] =>
    p !== null && Number.isFinite(p) && Number.isFinite(t[row]) && Number.isFinite(observed[row]) ? [{ t: t[row], residual: observed[row] - p }] : [];
  return {
    time,
    date: col.type === 'date',
    holdout: split.test.flatMap((row, k) => keep(row, holdoutPredictions[k])),
    outOfFold: split.train.flatMap((row, k) => keep(row, cv.predictions[k])),
  };
}

/** A prediction-interval output without its per-row parts, as the report and manifest need it. */
function withoutRows(o: PredictionIntervalOutput): Omit<PredictionIntervalOutput, 'table' | 'holdout'> {
  const { table: _table, holdout: _holdout, ...rest } = o;
  return rest;
}

/** The most points the split map draws; beyond, every step-th row. */
export const MAP_POINTS = 5000;

function splitMap(frame: Frame, blocks: Blocks, split: HoldoutOutput, folds: FoldsOutput): NonNullable<Results['splitMap']> {
  const set = new Array<string>(frame.rows).fill('');
  for (const r of split.test) set[r] = 'holdout';
  split.train.forEach((r, k) => (set[r] = folds.fold[k] < 0 ? 'no fold' : `fold ${folds.fold[k] + 1}`));
  const x = column(frame, blocks.x).values as Float64Array;
  const y = column(frame, blocks.y).values as Float64Array;
  const step = Math.max(1, Math.ceil(frame.rows / MAP_POINTS));
  const points: { x: number; y: number; set: string }[] = [];
  // rows the holdout's gap left out are on neither side and not drawn
  for (let r = 0; r < frame.rows; r += step) if (set[r]) points.push({ x: x[r], y: y[r], set: set[r] });
  return { points, step, rows: frame.rows };
}
