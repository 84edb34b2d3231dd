import { readFileSync } from 'node:fs';
import { stepRegistry } from '../steps/index.js';
import { BLOCK_COLUMN, cellLabel, gridCells, unitColumn, varyingParams } from '../steps/index.js';
import { hashValue, sha256 } from '../core/hash.js';
import { softwareFingerprint } from './environment.js';
import { DendrologError, messages } from '../core/messages.js';
import type { RecipeOrigin } from './recipe.js';
import { resolveSourcePath } from './recipe.js';
import { displayOf } from './paths.js';
import type { Recipe, RecipeStep, SourceSpec } from '../core/recipe-types.js';
import type { StepInstance } from '../core/step-types.js';
import type { Frame } from '../core/frame.js';
import { expressionLocator, isLearned, modelKinds, recipeContract, recipeSteps, type RecipeSection } from '../steps/index.js';
import { dict } from '../core/dict.js';

/** Permutation repeats, partial dependence curves, their points and the training rows they average. */
export const EXPLAIN = { repeats: 10, top: 3, points: 20, sampleRows: 500 };

/** The planned steps in execution order, plus the ids the report needs to find outputs. */
export interface Plan {
  steps: StepInstance[];
  sources: Record<string, string>;
  /** Data steps in order, from the main source to the model table (for the cleaning table). */
  dataSteps: string[];
  modelTable: string;
  holdout: string;
  folds: string;
  models: Record<string, { cells: string[]; choose: string; fit: string; score: string; explain: string | null; interval: { folds: string[]; gather: string } | null }>;
  /** The choice of the headline model across models, the skill scores and the evaluation's warnings. */
  headline: string;
}

/** Where a plan's files are and how its positions read: a recipe file's, or those of the recipe a run record keeps. */
export interface PlanOrigin {
  /** Absolute path of the folder the recipe's source paths are relative to. */
  dir: string;
  /** `file:line:column` of a place in the recipe (only the file when the positions are gone). */
  where(path: (string | number)[]): string;
}

/** Adds one step instance to a plan and returns its id. */
type AddStep = (id: string, kind: string, params: unknown, inputs: string[], locator?: Record<string, string>) => string;

/**
 * An empty plan and the one way instances enter it: each keyed by the SHA-256 of its kind, version,
 * params, the master seed (for steps that draw random numbers), the software fingerprint and its
 * inputs' keys.
 */
function planner(seed: number): { steps: StepInstance[]; add: AddStep } {
  const steps: StepInstance[] = [];
  const keyOf = new Map<string, string>();
  const software = softwareFingerprint();
  const add: AddStep = (id, kind, params, inputs, locator = {}) => {
    const def = stepRegistry[kind];
    const usedSeed = def.usesSeed ? seed : undefined;
    const key = hashValue({ kind, version: def.version, params, seed: usedSeed, software, inputs: inputs.map((i) => keyOf.get(i)) });
    // random draws follow the analysis, not the code: a refactor must not reshuffle the folds; the
    // executor adds the contents of the step's inputs (seededBy), so they follow parsed data, not file bytes
    const seedKey = hashValue({ kind, version: def.version, params: withoutKeys(params, def.seedOmits), seed: usedSeed });
    keyOf.set(id, key);
    steps.push({ id, kind, params, inputs, locator, key, seedKey, seed });
    return id;
  };
  return { steps, add };
}

/** Reads a source of the recipe: its file inside the recipe's folder, checked against its pin. */
function addSource(add: AddStep, origin: PlanOrigin, name: string, s: SourceSpec): string {
  const r = resolveSourcePath(origin, s.file);
  if ('problem' in r) throw new DendrologError(`${origin.where(['sources', name, 'file'])}: ${r.problem}`, 2);
  const fileSha = sha256(readFileSync(r.path));
  if (s.sha256 && s.sha256 !== fileSha) {
    throw new DendrologError(`${origin.where(['sources', name, 'sha256'])}: ${messages.sourceHashMismatch(s.file, s.sha256, fileSha)}`, 2);
  }
  return add(`source ${name}`, 'source', sourceParams(s, fileSha), [], { path: r.path, display: displayOf(r.path), file: s.file });
}

/** A data step of a plan, and why it removed a row (for predict's per-row reasons). */
export interface DataStep {
  id: string;
  removed(before: Frame, row: number): string;
}

/**
 * The data steps after the main table: joins, cleaning and the features computed row by row (derive;
 * learned ones are part of every fit). With `without` (columns new data lacks, such as the target),
 * each step does without them through its contract, and a step with nothing left is skipped.
 */
function addDataSteps(
  recipe: Recipe,
  origin: PlanOrigin,
  add: AddStep,
  sources: Record<string, string>,
  first: string,
  without: ReadonlySet<string> | null,
): { steps: DataStep[]; skipped: string[]; last: string } {
  const steps: DataStep[] = [];
  const skipped: string[] = [];
  let last = first;
  recipe.join.forEach((j, i) => {
    last = add(`join[${i}] ${j.with}`, 'join', j, [last, sources[j.with]]);
    steps.push({ id: last, removed: () => `no partner in source "${j.with}" (join[${i}] on ${j.on.join(', ')})` });
  });
  for (const { section, index: i, kind, params: given, contract, learned } of recipeSteps(recipe)) {
    if (learned) continue;
    const params = without && contract.without ? contract.without(given, without) : given;
    const id = `${section}[${i}] ${kind}`;
    if (params === null) {
      skipped.push(id);
      continue;
    }
    last = add(id, kind, params, [last], stepLocator(section, { kind, ...(params as Record<string, unknown>) }, i, origin.where));
    steps.push({ id: last, removed: (before, row) => `removed by ${id}: ${contract.rowReason?.(params, before, row) ?? 'the step removed it'}` });
  }
  return { steps, skipped, last };
}

/**
 * Turns a recipe into step instances, each keyed by the SHA-256 of its kind, version, params, the
 * master seed (for steps that draw random numbers), the software fingerprint and its inputs' keys; a source's key covers its file's bytes and read options, not its path.
 *
 * Example: changing `clean[1]` changes the keys of clean[1] and everything after it, nothing before.
 */
export function planRecipe(recipe: Recipe, origin: RecipeOrigin): Plan {
  const { steps, add } = planner(recipe.seed);
  const at: PlanOrigin = { dir: origin.dir, where: (path) => origin.doc.where(path) };
  const sources = dict<string>();
  for (const [name, s] of Object.entries(recipe.sources)) sources[name] = addSource(add, at, name, s);
  const main = sources[Object.keys(recipe.sources)[0]];
  const data = addDataSteps(recipe, at, add, sources, main, null);
  const dataSteps = [main, ...data.steps.map((d) => d.id)];
  const last = data.last;
  // declared only: a recipe without row_key keeps the keys it had
  const rowKey = recipe.row_key ? { rowKey: recipe.row_key } : {};
  const modelTable = add(
    'model table',
    'model_table',
    { target: recipe.target, predictors: recipe.predictors, groups: recipe.groups, time: recipe.time, ...rowKey, ...(recipe.blocks ? { blocks: recipe.blocks } : {}) },
    [last],
  );
  dataSteps.push(modelTable);
  const ev = recipe.evaluation;
  const holdout = add('holdout', 'holdout', { ...ev.holdout, target: recipe.target, groups: recipe.groups, time: recipe.time, ...rowKey }, [modelTable]);
  const folds = add('folds', 'folds', { ...ev.folds, target: recipe.target, groups: recipe.groups, time: recipe.time, ...rowKey }, [modelTable, holdout]);
  const learned = recipe.features.filter((f) => isLearned(f.kind));
  const common = { target: recipe.target, predictors: recipe.predictors, features: learned };
  // phase by phase across models, so the heavy independent steps (every model's grid cells, then the
  // final fits, then the explanations) sit next to each other and can run side by side
  const names = Object.keys(recipe.models);
  // every model's cells × folds first (the heavy units, side by side), then each cell's folds gathered
  const time = ev.folds.by === 'time' ? recipe.time : null;
  const cellsOf = (name: string) => gridCells(recipe.models[name].grid).map((cell) => ({ cell, label: `cv ${name} ${cellLabel(cell, varyingParams(recipe.models[name].grid))}` }));
  const foldIds = dict(
    names.map((name) => {
      const m = recipe.models[name];
      return [
        name,
        cellsOf(name).map(({ cell, label }) =>
          Array.from({ length: ev.folds.k }, (_, fold) =>
            add(`${label} fold ${fold + 1}`, 'cv_fold', { model: name, kind: m.kind, cell, time, ...common, fold }, [modelTable, holdout, folds]),
          ),
        ),
      ];
    }),
  );
  const cells = dict(names.map((name) => [name, cellsOf(name).map(({ cell, label }, c) => add(label, 'cross_validate', { cell }, [holdout, folds, ...foldIds[name][c]]))]));
  const choose = dict(
    names.map((name) => [
      name,
      add(`choose ${name}`, 'choose', { target: recipe.target, choose_by: ev.choose_by, k: ev.folds.k }, [modelTable, holdout, ...cells[name]]),
    ]),
  );
  // a grid of one cell has nothing to choose: its fits take the cell as a parameter and need not
  // wait for cross-validation, so they run beside it
  const only = (name: string) => {
    const all = gridCells(recipe.models[name].grid);
    return all.length === 1 ? { cell: all[0] } : null;
  };
  const fit = dict(
    names.map((name) => {
      const m = recipe.models[name];
      const one = only(name);
      return [name, add(`fit ${name}`, 'fit', { model: name, kind: m.kind, ...common, ...one }, one ? [modelTable, holdout] : [modelTable, holdout, choose[name]])];
    }),
  );
  // the chosen cells' fold models, kept for prediction intervals, once every final fit is planned
  const pi = ev.prediction_interval;
  const interval = dict(
    names.map((name) => {
      if (!pi) return [name, null];
      const m = recipe.models[name];
      const one = only(name);
      const ids = Array.from({ length: ev.folds.k }, (_, fold) =>
        add(`interval ${name} fold ${fold + 1}`, 'interval_fold', { model: name, kind: m.kind, time, ...common, fold, ...one }, one ? [modelTable, holdout, folds] : [modelTable, holdout, folds, choose[name]]),
      );
      return [name, ids];
    }),
  );
  const intervalParams = {
    level: pi ? pi.level : 0,
    target: recipe.target,
    targetScale: recipe.target_scale,
    groups: recipe.groups ?? (recipe.blocks ? BLOCK_COLUMN : null),
    units: unitColumn(ev.folds.by, recipe.groups),
  };
  const gathered = dict(names.map((name) => [name, interval[name] ? add(`prediction interval ${name}`, 'prediction_interval', intervalParams, [modelTable, holdout, ...interval[name]!]) : null]));
  const scoreParams = { target: recipe.target, targetScale: recipe.target_scale, groups: recipe.groups, units: unitColumn(ev.holdout.by, recipe.groups) };
  const score = dict(names.map((name) => [name, add(`score ${name}`, 'score', scoreParams, [modelTable, holdout, fit[name]])]));
  const explain = dict(
    names.map((name) => [
      name,
      !modelKinds[recipe.models[name].kind].explained ? null : add(`explain ${name}`, 'explain', { target: recipe.target, ...EXPLAIN }, [modelTable, holdout, fit[name]]),
    ]),
  );
  const models: Plan['models'] = dict(
    names.map((name) => [name, { cells: cells[name], choose: choose[name], fit: fit[name], score: score[name], explain: explain[name], interval: interval[name] ? { folds: interval[name]!, gather: gathered[name]! } : null }]),
  );
  const headline = add(
    'headline',
    'headline',
    {
      models: names.map((name) => ({ name, kind: recipe.models[name].kind, grid: recipe.models[name].grid })),
      choose_by: ev.choose_by,
      holdout_by: ev.holdout.by,
      folds_by: ev.folds.by,
      groups: recipe.groups,
      time: recipe.time,
      predictors: recipe.predictors,
    },
    [modelTable, holdout, ...names.flatMap((name) => [choose[name], fit[name], score[name]])],
  );
  return { steps, sources, dataSteps, modelTable, holdout, folds, models, headline };
}

/** A file of new rows for `predict`, shaped like the recipe's main source. */
export interface NewRowsFile {
  /** Absolute path of the file. */
  path: string;
  /** Declared columns of the main source the file lacks: filled as missing. */
  absent: string[];
  /** Columns the data steps must do without (the target and what it is computed from), or null. */
  without: ReadonlySet<string> | null;
}

/** The plan `predict` runs: the run's data steps applied to new rows. */
export interface ApplyPlan {
  steps: StepInstance[];
  /** The new file as read, before anything is added to it. */
  read: string;
  /** From the numbered new rows to the last data step, in order. */
  dataSteps: DataStep[];
  /** Steps left out because nothing of them applies without the absent columns. */
  skipped: string[];
}

/**
 * The apply mode of planning: the recipe's own data steps (joins with its other sources, cleaning,
 * features computed row by row) over a new file instead of the main source, with the rows numbered
 * so each one removed can be given its reason. The learned features and the model are applied from
 * the run's model file afterwards.
 *
 * Example: `planApply(recipe, {dir, where: () => 'lake.yaml'}, {path: '/data/new.csv', absent: ['chl'], without: new Set(['chl'])})`
 */
export function planApply(recipe: Recipe, origin: PlanOrigin, file: NewRowsFile): ApplyPlan {
  const { steps, add } = planner(recipe.seed);
  const [mainName, ...others] = Object.keys(recipe.sources);
  const main = recipe.sources[mainName];
  const absent = new Set(file.absent);
  const spec = { ...main, columns: dict(Object.entries(main.columns).filter(([c]) => !absent.has(c))) };
  const read = add(`source ${mainName} (new rows)`, 'source', sourceParams(spec, sha256(readFileSync(file.path))), [], { path: file.path, display: displayOf(file.path) });
  const rows = add('new rows', 'new_rows', { absent: file.absent.map((c) => [c, main.columns[c]]) }, [read]);
  const sources = dict<string>();
  for (const name of others) sources[name] = addSource(add, origin, name, recipe.sources[name]);
  const data = addDataSteps(recipe, origin, add, sources, rows, file.without);
  return { steps, read, dataSteps: [{ id: rows, removed: () => 'not read' }, ...data.steps], skipped: data.skipped };
}

/**
 * What a cleaning or feature step's messages need besides its params: where each of its
 * expressions sits in the recipe (`where` turns a recipe path into file:line:column). Not part of the key.
 */
export function stepLocator(section: RecipeSection, step: RecipeStep, i: number, where: (path: (string | number)[]) => string): Record<string, string> {
  const { kind, ...params } = step;
  const expressions = recipeContract(section, kind)?.expressions?.(params) ?? [];
  if (expressions.length === 0) return {};
  return expressionLocator(`${section}[${i}] ${kind}`, expressions.map((e): [string | null, string] => [e.column ?? null, where([section, i, kind, ...e.at])]));
}

/**
 * The source step's params: every read option of the spec, with the file's identity as its
 * SHA-256 rather than its path (so moving a file re-runs nothing, and `predict` can read another file).
 */
export function sourceParams(spec: SourceSpec, fileSha: string): Record<string, unknown> {
  const { file: _file, sha256: _pin, ...options } = spec;
  return { ...options, sha256: fileSha };
}

/** `params` without the named keys (a copy; the same object when there are none to leave out). */
function withoutKeys(params: unknown, omit: string[] | undefined): unknown {
  if (!omit || omit.length === 0 || params === null || typeof params !== 'object') return params;
  return Object.fromEntries(Object.entries(params).filter(([k]) => !omit.includes(k)));
}
