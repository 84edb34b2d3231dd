import { DendrologError, messages } from '../core/messages.js';
import { dict, has } from '../core/dict.js';
import type { ModelKind, SplitBy } from '../core/recipe-types.js';
import type { FrameOutput, StepDefinition, Warning } from '../core/step-types.js';
import { WarningLog } from '../core/warnings.js';
import { metricReasons, negligibleAgainst, type MetricSet } from '../models/metrics.js';
import { METRIC_WORDS, better, type ChooseOutput } from './choose.js';
import { constantPredictors } from './cross-validate.js';
import type { FitOutput } from './fit.js';
import type { HoldoutOutput } from './holdout.js';
import { modelKinds } from './model-kinds.js';
import type { ScoreOutput } from './score.js';

export interface HeadlineParams {
  /** Every model in recipe order (an earlier model wins a tie), with its kind and its grid as the recipe wrote it. */
  models: { name: string; kind: ModelKind; grid: Record<string, (number | boolean | null)[]> }[];
  choose_by: 'rmse' | 'mae' | 'r2';
  /** How the holdout and the folds were drawn, for the warnings about random splits. */
  holdout_by: SplitBy;
  folds_by: SplitBy;
  groups: string | null;
  time: string | null;
  predictors: string[];
}

export interface HeadlineOutput {
  /** The model with the best cross-validated score; its holdout score is the headline. */
  chosen: string;
  /** Per model, in recipe order: 1 − MSE(model) / MSE(baseline) on the holdout, per other baseline model. */
  models: ({ name: string } & Skill)[];
  /** Why the holdout intervals are unreliable (too few groups or rows), or null. */
  holdoutUnreliable: string | null;
  /** The evaluation's own warnings, in the order the report lists them (after the steps' warnings). */
  warnings: Warning[];
}

/** A model's holdout skill per baseline model, and why where it is undefined (null). */
export interface Skill {
  skill: Record<string, number | null>;
  skillReasons: Record<string, string>;
}

/** What the step knows of one model: its params entry and the outputs of its choose, fit and score steps. */
interface Judged {
  name: string;
  kind: ModelKind;
  grid: Record<string, (number | boolean | null)[]>;
  chosen: ChooseOutput;
  fitted: FitOutput;
  score: ScoreOutput;
}

/**
 * Picks the headline model across models by cross-validated score (never the holdout's), measures
 * each model's holdout skill against the baseline models, and says what the evaluation should warn
 * about. Inputs: the model table, the holdout, then each model's choose, fit and score outputs in
 * the order of `params.models`. Roles come from the model kinds' adapters, never from their names.
 */
export const headline: StepDefinition<HeadlineParams, HeadlineOutput> = {
  kind: 'headline',
  version: 1,
  codec: 'json',
  run(inputs, params) {
    const frame = (inputs[0] as FrameOutput).frame;
    const split = inputs[1] as HoldoutOutput;
    const models: Judged[] = params.models.map((m, i) => ({
      ...m,
      chosen: inputs[2 + 3 * i] as ChooseOutput,
      fitted: inputs[3 + 3 * i] as FitOutput,
      score: inputs[4 + 3 * i] as ScoreOutput,
    }));
    const best = chooseHeadline(models, params.choose_by);
    const skills = new Map(models.map((m) => [m.name, skillScores(m, models)]));
    const log = new WarningLog();
    evaluationWarnings(params, models, best, skills.get(best.name)!.skill, log);
    const unreliable = holdoutUnreliable(split);
    if (unreliable) log.add('holdout-unreliable', messages.holdoutUnreliable(unreliable));
    for (const p of constantPredictors(frame, params.predictors, split.train)) log.add('constant-predictor', messages.predictorConstant(p));
    for (const m of models) {
      const used = [m.fitted.used, ...m.chosen.cells[m.chosen.chosen].used];
      const collinear = [...new Set(used.flatMap((u) => (Array.isArray(u.collinear) ? (u.collinear as string[]) : [])))];
      if (collinear.length > 0) log.add('linear-collinear', messages.linearCollinear(m.name, collinear));
    }
    return {
      chosen: best.name,
      models: models.map((m) => ({ name: m.name, ...skills.get(m.name)! })),
      holdoutUnreliable: unreliable,
      warnings: log.list(),
    };
  },
  summary: (o) => `chose ${o.chosen}`,
};

/** Cross-validated metrics of a model's chosen cell (pooled out-of-fold). */
function crossValidated(m: Judged): MetricSet {
  return m.chosen.cells[m.chosen.chosen].pooled;
}

/**
 * The model with the best cross-validated score; a tie goes to the earlier model, and a model whose
 * score is undefined is never chosen. Throws when no model has a defined score.
 */
function chooseHeadline(models: Judged[], by: HeadlineParams['choose_by']): Judged {
  const comparable = models.filter((m) => m.chosen.failed === null);
  if (comparable.length === 0) {
    throw new DendrologError(messages.noModelScored(METRIC_WORDS[by], models.map((m) => ({ model: m.name, reason: m.chosen.cells[0].failed ?? '' }))), 1);
  }
  let best = comparable[0];
  for (const m of comparable) if (better(crossValidated(m), crossValidated(best), by)) best = m;
  return best;
}

/** A model's holdout skill against every baseline model other than itself, and why where it is undefined. */
function skillScores(m: Judged, models: Judged[]): Skill {
  const skill = dict<number | null>();
  const skillReasons = dict<string>();
  // the skill ratio has the baseline's MSE as its denominator: like R²'s, it means nothing when
  // that error is rounding noise against the size of the target
  const size = m.score.observed.reduce((a, v) => Math.max(a, Math.abs(v)), 0);
  for (const b of models) {
    if (modelKinds[b.kind].baseline === null || b.name === m.name) continue;
    const base = b.score.holdout;
    const own = m.score.holdout;
    const undefinedBecause =
      base.rmse.value === null ? metricReasons.partUndefined('baseline', base.rmse.reason ?? '')
      : own.rmse.value === null ? metricReasons.partUndefined('model', own.rmse.reason ?? '')
      : negligibleAgainst(base.rmse.value, size) ? metricReasons.negligibleBaselineError()
      : null;
    // as a ratio of RMSEs, squared: the MSEs of a target near 1e300 would overflow
    const ratio = undefinedBecause === null ? own.rmse.value! / base.rmse.value! : NaN;
    // a model worse than the baseline by a factor beyond 1e154 squares past the largest float64
    const why = undefinedBecause ?? (Number.isFinite(1 - ratio ** 2) ? null : metricReasons.skillOverflow(ratio));
    skill[b.name] = why !== null ? null : 1 - ratio ** 2;
    if (why !== null) skillReasons[b.name] = why;
  }
  return { skill, skillReasons };
}

/** Fewer holdout units than this give intervals too rough to trust. */
export const MIN_HOLDOUT_GROUPS = 5;
export const MIN_HOLDOUT_ROWS = 20;

/**
 * What makes the holdout intervals unreliable, or null: a spread measured from fewer than 5 groups
 * (or 20 rows) is itself too uncertain (and in simulation the 90% interval covered the truth in
 * about 80% of cases at 5 groups).
 *
 * Example: a holdout of 3 groups gives `'3 holdout groups (fewer than 5)'`.
 */
export function holdoutUnreliable(split: HoldoutOutput): string | null {
  if ((split.by === 'groups' || split.by === 'blocks') && split.testGroups < MIN_HOLDOUT_GROUPS) {
    const unit = split.by === 'groups' ? 'group' : 'block';
    return `${split.testGroups} holdout ${unit}${split.testGroups === 1 ? '' : 's'} (fewer than ${MIN_HOLDOUT_GROUPS})`;
  }
  if (split.test.length < MIN_HOLDOUT_ROWS) return `${split.test.length} holdout rows (fewer than ${MIN_HOLDOUT_ROWS})`;
  return null;
}

function evaluationWarnings(params: HeadlineParams, models: Judged[], best: Judged, bestSkill: Record<string, number | null>, log: WarningLog) {
  for (const part of ['holdout', 'folds'] as const) {
    if ((part === 'holdout' ? params.holdout_by : params.folds_by) !== 'random') continue;
    const what = part === 'holdout' ? 'the holdout is drawn' : 'the folds are drawn';
    if (params.groups) {
      log.add('random-split-with-groups', messages.randomSplitWithGroups(params.groups, what));
    } else if (params.time) {
      log.add('random-split-with-time', messages.randomSplitWithTime(params.time, what));
    }
  }
  for (const m of models) {
    const cell = m.chosen.cells[m.chosen.chosen].cell;
    for (const [param, values] of Object.entries(m.grid)) {
      const numeric = values.filter((v): v is number => typeof v === 'number');
      if (numeric.length < 2 || values.length !== numeric.length) continue;
      const v = cell[param];
      // no value lies beyond a hard limit (one row per leaf, one candidate predictor, the whole sample): the kind says which
      const limits = (has(modelKinds[m.kind].grid, param) ? modelKinds[m.kind].grid[param].limits : undefined) ?? {};
      const atLimit = v === limits.low || v === limits.high;
      if (!atLimit && (v === Math.min(...numeric) || v === Math.max(...numeric))) {
        log.add('grid-edge', messages.gridEdge(m.name, param, v, numeric));
      }
    }
  }
  for (const [p, n] of Object.entries(best.score.outsideRange)) {
    log.add('outside-training-range', messages.outsideTrainingRange(n, p));
  }
  const linear = models.find((m) => modelKinds[m.kind].baseline === 'linear');
  if (linear && best !== linear && !better(crossValidated(best), crossValidated(linear), params.choose_by)) {
    log.add('no-better-than-linear', messages.noBetterThanLinear(best.name, linear.name));
  }
  if (linear && best !== linear) {
    const s = bestSkill[linear.name];
    if (s !== null && s !== undefined && s <= 0) {
      log.add('holdout-no-better-than-linear', messages.holdoutNoBetterThanLinear(best.name, linear.name, s));
    }
  }
}
