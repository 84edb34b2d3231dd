import { readFileSync } from 'node:fs';
import { stepRegistry } from '../steps/index.js';
import { cellLabel, gridCells, varyingParams } from '../steps/index.js';
import { hashValue, sha256 } from '../core/hash.js';
import { softwareFingerprint } from './environment.js';
import { DendrologError, messages } from '../core/messages.js';
import type { RecipeOrigin } from './recipe.js';
import { resolveSourcePath } from './recipe.js';
import { displayOf } from './paths.js';
import type { CleanStep, Recipe, SourceSpec } from '../core/recipe-types.js';
import type { StepInstance } from '../core/step-types.js';
import { expressionLocator, modelKinds, recipeContract } from '../steps/index.js';
import { dict } from '../core/dict.js';

/** Bootstrap resamples behind each holdout interval. */
export const BOOTSTRAP_RESAMPLES = 1000;
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
  models: Record<string, { cells: string[]; choose: string; fit: string; score: string; explain: string | null }>;
}

/**
 * Turns a recipe into step instances, each keyed by the SHA-256 of its kind, version, params, the
 * master seed (for steps that draw random numbers), the software fingerprint and its inputs' keys; a source's key covers its file's bytes and read options, not its path.
 *
 * Example: changing `clean[1]` changes the keys of clean[1] and everything after it, nothing before.
 */
export function planRecipe(recipe: Recipe, origin: RecipeOrigin): Plan {
  const steps: StepInstance[] = [];
  const keyOf = new Map<string, string>();
  const seedKeyOf = new Map<string, string>();
  const software = softwareFingerprint();
  const add = (id: string, kind: string, params: unknown, inputs: string[], locator: Record<string, string> = {}) => {
    const def = stepRegistry[kind];
    const seed = def.usesSeed ? recipe.seed : undefined;
    const key = hashValue({ kind, version: def.version, params, seed, software, inputs: inputs.map((i) => keyOf.get(i)) });
    // random draws follow the analysis, not the code: a refactor must not reshuffle the folds
    const seedKey = hashValue({ kind, version: def.version, params, seed, inputs: inputs.map((i) => seedKeyOf.get(i)) });
    keyOf.set(id, key);
    seedKeyOf.set(id, seedKey);
    steps.push({ id, kind, params, inputs, locator, key, seedKey, seed: recipe.seed });
    return id;
  };

  const sources = dict<string>();
  for (const [name, s] of Object.entries(recipe.sources)) {
    const r = resolveSourcePath(origin, s.file);
    if ('problem' in r) throw new DendrologError(`${origin.doc.where(['sources', name, 'file'])}: ${r.problem}`, 2);
    const fileSha = sha256(readFileSync(r.path));
    if (s.sha256 && s.sha256 !== fileSha) {
      throw new DendrologError(`${origin.doc.where(['sources', name, 'sha256'])}: ${messages.sourceHashMismatch(s.file, s.sha256, fileSha)}`, 2);
    }
    sources[name] = add(
      `source ${name}`,
      'source',
      sourceParams(s, fileSha),
      [],
      { path: r.path, display: displayOf(r.path), file: s.file },
    );
  }
  const dataSteps: string[] = [sources[Object.keys(recipe.sources)[0]]];
  let last = dataSteps[0];
  recipe.join.forEach((j, i) => {
    last = add(`join[${i}] ${j.with}`, 'join', j, [last, sources[j.with]]);
    dataSteps.push(last);
  });
  recipe.clean.forEach((c, i) => {
    const { kind, ...params } = c;
    const locator = cleanLocator(c, i, (path) => origin.doc.where(path));
    last = add(`clean[${i}] ${kind}`, kind, params, [last], locator);
    dataSteps.push(last);
  });
  recipe.features.forEach((f, i) => {
    if (f.kind !== 'derive') return;
    const positions = Object.keys(f.columns).map((name): [string, string] => [name, origin.doc.where(['features', i, 'derive', name])]);
    last = add(`features[${i}] derive`, 'derive', { columns: f.columns }, [last], expressionLocator(`features[${i}] derive`, positions));
    dataSteps.push(last);
  });
  const modelTable = add(
    'model table',
    'model_table',
    { target: recipe.target, predictors: recipe.predictors, groups: recipe.groups, time: recipe.time },
    [last],
  );
  dataSteps.push(modelTable);
  const ev = recipe.evaluation;
  const holdout = add('holdout', 'holdout', { ...ev.holdout, groups: recipe.groups, time: recipe.time }, [modelTable]);
  const folds = add('folds', 'folds', { ...ev.folds, groups: recipe.groups, time: recipe.time }, [modelTable, holdout]);
  const learned = recipe.features.filter((f) => f.kind !== 'derive');
  const common = { target: recipe.target, predictors: recipe.predictors, features: learned };
  // phase by phase across models, so the heavy independent steps (every model's grid cells, then the
  // final fits, then the explanations) sit next to each other and can run side by side
  const names = Object.keys(recipe.models);
  const cells = dict(
    names.map((name) => {
      const m = recipe.models[name];
      const time = ev.folds.by === 'time' ? recipe.time : null;
      const ids = gridCells(m.grid).map((cell) =>
        add(`cv ${name} ${cellLabel(cell, varyingParams(m.grid))}`, 'cross_validate', { model: name, kind: m.kind, cell, time, ...common }, [
          modelTable,
          holdout,
          folds,
        ]),
      );
      return [name, ids];
    }),
  );
  const choose = dict(
    names.map((name) => [
      name,
      add(`choose ${name}`, 'choose', { target: recipe.target, choose_by: ev.choose_by, k: ev.folds.k }, [modelTable, holdout, ...cells[name]]),
    ]),
  );
  const fit = dict(
    names.map((name) => {
      const m = recipe.models[name];
      return [name, add(`fit ${name}`, 'fit', { model: name, kind: m.kind, ...common }, [modelTable, holdout, choose[name]])];
    }),
  );
  const scoreParams = { target: recipe.target, groups: recipe.groups, resamples: BOOTSTRAP_RESAMPLES, byGroups: ev.holdout.by === 'groups' };
  const score = dict(names.map((name) => [name, add(`score ${name}`, 'score', scoreParams, [modelTable, holdout, fit[name]])]));
  const explain = dict(
    names.map((name) => [
      name,
      !modelKinds[recipe.models[name].kind].explained ? null : add(`explain ${name}`, 'explain', { target: recipe.target, ...EXPLAIN }, [modelTable, holdout, fit[name]]),
    ]),
  );
  const models: Plan['models'] = dict(
    names.map((name) => [name, { cells: cells[name], choose: choose[name], fit: fit[name], score: score[name], explain: explain[name] }]),
  );
  return { steps, sources, dataSteps, modelTable, holdout, folds, models };
}

/**
 * What a cleaning step's messages need besides its params: where each of its expressions sits in
 * the recipe (`where` turns a recipe path into file:line:column). Not part of the key.
 */
export function cleanLocator(step: CleanStep, i: number, where: (path: (string | number)[]) => string): Record<string, string> {
  const { kind, ...params } = step;
  const expressions = recipeContract('clean', kind)?.expressions?.(params) ?? [];
  if (expressions.length === 0) return {};
  return expressionLocator(`clean[${i}] ${kind}`, expressions.map((e): [string | null, string] => [e.column ?? null, where(['clean', i, kind, ...e.at])]));
}

/**
 * The source step's params: every read option of the spec, with the file's identity as its
 * SHA-256 rather than its path (so moving a file re-runs nothing, and `predict` can read another file).
 */
export function sourceParams(spec: SourceSpec, fileSha: string): Record<string, unknown> {
  const { file: _file, sha256: _pin, ...options } = spec;
  return { ...options, sha256: fileSha };
}
