import type { MetricSet } from '../models/metrics.js';
import type { ChooseOutput } from '../steps/index.js';
import type { CrossValidateOutput } from '../steps/index.js';
import type { FitOutput } from '../steps/index.js';
import type { FoldsOutput } from '../steps/index.js';
import type { HoldoutOutput } from '../steps/index.js';
import { cellLabel, modelKinds } from '../steps/index.js';
import type { ColumnProfile } from '../steps/index.js';
import { better } from '../steps/index.js';
import type { ScoreOutput } from '../steps/index.js';
import type { ExplainOutput } from '../steps/index.js';
import type { Execution } from './execute.js';
import type { Plan } from './plan.js';
import type { ModelKind, Recipe } from '../core/recipe-types.js';
import type { FrameOutput, Warning } from '../core/step-types.js';
import { WarningLog } from '../core/warnings.js';
import { column } from '../core/frame.js';
import { dict } from '../core/dict.js';
import { DendrologError, messages } from '../core/messages.js';
import { metricReasons, negligibleAgainst } from '../models/metrics.js';
import { METRIC_WORDS } from '../steps/index.js';
import { constantPredictors } from '../steps/index.js';

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
  learned: { final: FitOutput['design']; folds: FitOutput['design'][] };
}

/** Everything the report and manifest say about a run, gathered from step outputs. */
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
  };
  folds: { k: number; by: string; gap: number };
  models: ModelResult[];
  /** The model with the best cross-validated score; its holdout score is the headline. */
  chosenModel: string;
  warnings: Warning[];
  /** Holdout observations and the chosen model's predictions, for the plots. */
  holdoutRows: { observed: number[]; predicted: number[]; groups: string[] | null };
  /** The headline model's final fit, for model.bin. */
  headlineFit: FitOutput;
  /** The headline model's prediction for every modelling row, in model-table order. */
  predictions: { row: number; set: 'training' | 'holdout'; observed: number; predicted: number }[];
}

/**
 * Gathers results from the executed plan and adds the evaluation's own warnings.
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
  const baselines = Object.entries(recipe.models).filter(([, m]) => modelKinds[m.kind].baseline !== null);
  const scores = new Map(Object.entries(plan.models).map(([name, ids]) => [name, out(ids.score) as ScoreOutput]));
  const models: ModelResult[] = Object.entries(plan.models).map(([name, ids]) => {
    const chosen = out(ids.choose) as ChooseOutput;
    const fitted = out(ids.fit) as FitOutput;
    const score = scores.get(name)!;
    const skill = dict<number | null>();
    const skillReasons = dict<string>();
    // the skill ratio has the baseline's MSE as its denominator: like R²'s, it means nothing when
    // that error is rounding noise against the size of the target
    const size = score.observed.reduce((a, v) => Math.max(a, Math.abs(v)), 0);
    for (const [b] of baselines) {
      if (b === name) continue;
      const base = scores.get(b)!.holdout;
      const undefinedBecause =
        base.rmse.value === null ? metricReasons.partUndefined('baseline', base.rmse.reason ?? '')
        : score.holdout.rmse.value === null ? metricReasons.partUndefined('model', score.holdout.rmse.reason ?? '')
        : negligibleAgainst(base.rmse.value, size) ? metricReasons.negligibleBaselineError()
        : null;
      // as a ratio of RMSEs, squared: the MSEs of a target near 1e300 would overflow
      skill[b] = undefinedBecause !== null ? null : 1 - (score.holdout.rmse.value! / base.rmse.value!) ** 2;
      if (undefinedBecause !== null) skillReasons[b] = undefinedBecause;
    }
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
      training: score.training,
      crossValidated: chosen.cells[chosen.chosen].pooled,
      skill,
      skillReasons,
      failed: chosen.failed,
      explain: ids.explain ? (out(ids.explain) as ExplainOutput) : null,
      learned: { final: fitted.design, folds: (out(ids.cells[chosen.chosen]) as CrossValidateOutput).learned },
    };
  });
  // a model whose cross-validated score is undefined is never the headline
  const comparable = models.filter((m) => m.failed === null);
  if (comparable.length === 0) {
    throw new DendrologError(
      messages.noModelScored(METRIC_WORDS[recipe.evaluation.choose_by], models.map((m) => ({ model: m.name, reason: m.cells[0].failed ?? '' }))),
      1,
    );
  }
  let best = comparable[0];
  for (const m of comparable) if (better(m.crossValidated, best.crossValidated, recipe.evaluation.choose_by)) best = m;
  const warnings = new WarningLog();
  for (const w of exec.warnings) warnings.add(w.code, w.message, w.count);
  const unreliable = holdoutUnreliable(split);
  evaluationWarnings(recipe, models, best, scores.get(best.name)!, warnings);
  if (unreliable) warnings.add('holdout-unreliable', messages.holdoutUnreliable(unreliable));
  const modelFrame = (out(plan.modelTable) as FrameOutput).frame;
  for (const p of constantPredictors(modelFrame, recipe.predictors, split.train)) warnings.add('constant-predictor', messages.predictorConstant(p));
  for (const m of models) {
    const collinear = [...new Set([m.used, ...m.cells[m.chosen].used].flatMap((u) => (Array.isArray(u.collinear) ? (u.collinear as string[]) : [])))];
    if (collinear.length > 0) warnings.add('linear-collinear', messages.linearCollinear(m.name, collinear));
  }
  const bestScore = scores.get(best.name)!;
  const targetValues = column((out(plan.modelTable) as FrameOutput).frame, recipe.target).values as Float64Array;
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
      unreliable,
    },
    folds: { k: folds.k, by: folds.by, gap: recipe.evaluation.folds.gap },
    models,
    chosenModel: best.name,
    warnings: warnings.list(),
    holdoutRows: { observed: bestScore.observed, predicted: bestScore.predictions, groups: bestScore.groups },
    headlineFit: out(plan.models[best.name].fit) as FitOutput,
    predictions: [
      ...split.train.map((row, k) => ({ row, set: 'training' as const, observed: targetValues[row], predicted: bestScore.trainingPredictions[k] })),
      ...split.test.map((row, k) => ({ row, set: 'holdout' as const, observed: targetValues[row], predicted: bestScore.predictions[k] })),
    ].sort((a, b) => a.row - b.row),
  };
}

/** Fewer holdout units than this give bootstrap intervals too coarse to trust. */
export const MIN_HOLDOUT_GROUPS = 5;
export const MIN_HOLDOUT_ROWS = 20;

/**
 * What makes the holdout intervals unreliable, or null: a bootstrap over fewer than 5 groups (or
 * 20 rows) can draw only a handful of distinct resamples, so its percentiles are mostly ties.
 */
export function holdoutUnreliable(split: HoldoutOutput): string | null {
  if (split.by === 'groups' && split.testGroups < MIN_HOLDOUT_GROUPS) {
    return `${split.testGroups} holdout group${split.testGroups === 1 ? '' : 's'} (fewer than ${MIN_HOLDOUT_GROUPS})`;
  }
  if (split.test.length < MIN_HOLDOUT_ROWS) return `${split.test.length} holdout rows (fewer than ${MIN_HOLDOUT_ROWS})`;
  return null;
}

function evaluationWarnings(recipe: Recipe, models: ModelResult[], best: ModelResult, score: ScoreOutput, log: WarningLog) {
  const ev = recipe.evaluation;
  for (const part of ['holdout', 'folds'] as const) {
    if (ev[part].by !== 'random') continue;
    const what = part === 'holdout' ? 'the holdout is drawn' : 'the folds are drawn';
    if (recipe.groups) {
      log.add('random-split-with-groups', messages.randomSplitWithGroups(recipe.groups, what));
    } else if (recipe.time) {
      log.add('random-split-with-time', messages.randomSplitWithTime(recipe.time, what));
    }
  }
  for (const m of models) {
    const spec = recipe.models[m.name];
    const cell = m.cells[m.chosen].cell;
    for (const [param, values] of Object.entries(spec.grid)) {
      const numeric = values.filter((v): v is number => typeof v === 'number');
      if (numeric.length < 2 || values.length !== numeric.length) continue;
      const v = cell[param];
      // no value lies beyond a hard limit: one row per leaf, one candidate predictor, the whole sample
      const atLimit = (v === 1 && ['min_leaf', 'mtry', 'max_depth'].includes(param) && v === Math.min(...numeric)) ||
        (param === 'sample_fraction' && v === 1);
      if (!atLimit && (v === Math.min(...numeric) || v === Math.max(...numeric))) {
        log.add('grid-edge', messages.gridEdge(m.name, param, v, numeric));
      }
    }
  }
  for (const [p, n] of Object.entries(score.outsideRange)) {
    log.add('outside-training-range', messages.outsideTrainingRange(n, p));
  }
  const linear = models.find((m) => modelKinds[m.kind].baseline === 'linear');
  if (linear && best !== linear && !better(best.crossValidated, linear.crossValidated, ev.choose_by)) {
    log.add('no-better-than-linear', messages.noBetterThanLinear(best.name, linear.name));
  }
  if (linear && best !== linear) {
    const s = best.skill[linear.name];
    if (s !== null && s !== undefined && s <= 0) {
      log.add('holdout-no-better-than-linear', messages.holdoutNoBetterThanLinear(best.name, linear.name, s));
    }
  }
}
