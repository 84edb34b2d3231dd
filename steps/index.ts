import type { RecipeContract, StepDefinition } from '../core/step-types.js';
import type { RecipeStep } from '../core/recipe-types.js';
import { dict, has } from '../core/dict.js';
import { learnedFeatures } from './learned.js';
import { choose } from './choose.js';
import { crossValidate, cvFold } from './cross-validate.js';
import { intervalFold } from './interval-fold.js';
import { predictionInterval } from './prediction-interval.js';
import { deduplicate } from './deduplicate.js';
import { derive } from './derive.js';
import { dropMissing } from './drop-missing.js';
import { explain } from './explain.js';
import { fit } from './fit.js';
import { folds } from './folds.js';
import { headline } from './headline.js';
import { holdout } from './holdout.js';
import { join } from './join.js';
import { keepRows } from './keep-rows.js';
import { modelTable } from './model-table.js';
import { newRows } from './new-rows.js';
import { replace } from './replace.js';
import { score } from './score.js';
import { source } from './source.js';
import { within } from './within.js';

/** Every step kind, by name. Adding a kind: one file in steps/ and one line here. */
export const stepRegistry: Record<string, StepDefinition<never, unknown>> = dict(
  [source, newRows, join, replace, dropMissing, keepRows, within, deduplicate, derive, modelTable, holdout, folds, cvFold, crossValidate, choose, fit, intervalFold, predictionInterval, score, explain, headline].map(
    (s) => [s.kind, s as StepDefinition<never, unknown>],
  ),
);

/** A recipe section's list of steps. */
export type RecipeSection = RecipeContract<unknown>['section'];

/** Every kind a recipe can name in a section, with its contract: the data steps, then the learned features. */
function contracts(): [string, RecipeContract<unknown>][] {
  return [...Object.values(stepRegistry), ...Object.values(learnedFeatures)]
    .filter((d) => d.recipe !== undefined)
    .map((d) => [d.kind, d.recipe as RecipeContract<unknown>]);
}

/**
 * The recipe contract of a kind written under `section`, or undefined when no such kind is there.
 *
 * Example: `recipeContract('clean', 'within')?.reads({column: 'x', min: 0, max: null})`
 */
export function recipeContract(section: RecipeSection, kind: string): RecipeContract<unknown> | undefined {
  return contracts().find(([k, c]) => k === kind && c.section === section)?.[1];
}

/** The kinds written under a section of the recipe, in registry order, with their contracts. */
export function recipeKinds(section: RecipeSection): [string, RecipeContract<unknown>][] {
  return contracts().filter(([, c]) => c.section === section);
}

/** One step of a recipe's `clean` or `features` list, with its contract. */
export interface RecipeStepEntry {
  section: RecipeSection;
  /** Its position in its list. */
  index: number;
  kind: string;
  params: Record<string, unknown>;
  contract: RecipeContract<unknown>;
  /** A feature learned from training rows inside each fit, not a step of the plan. */
  learned: boolean;
}

/**
 * The recipe's cleaning steps, then its feature steps, in recipe order, each with its contract (a
 * kind the registry does not know, which the schema would have refused, is left out).
 *
 * Example: `recipeSteps(recipe).filter((s) => !s.learned)` are the steps that run row by row.
 */
export function recipeSteps(recipe: { clean: RecipeStep[]; features: RecipeStep[] }): RecipeStepEntry[] {
  const lists: [RecipeSection, RecipeStep[]][] = [
    ['clean', recipe.clean],
    ['features', recipe.features],
  ];
  return lists.flatMap(([section, steps]) =>
    steps.flatMap(({ kind, ...params }, index) => {
      const contract = recipeContract(section, kind);
      return contract ? [{ section, index, kind, params, contract, learned: section === 'features' && isLearned(kind) }] : [];
    }),
  );
}

/**
 * Whether a feature kind is learned from training rows inside each fit (impute, one_hot,
 * standardize) rather than run once as a step of the plan (derive).
 */
export function isLearned(kind: string): boolean {
  return has(learnedFeatures, kind);
}

// What the runner uses of the steps besides the registry: their output types, the grid of a model,
// the model adapters and design for predict, the expression rules and the text readers the recipe
// check shares. The runner imports steps/ through this file only.
export type { ChooseOutput } from './choose.js';
export type { CrossValidateOutput } from './cross-validate.js';
export { applyDesign } from './design.js';
export type { ExplainOutput } from './explain.js';
export { expressionLocator, expressionProblem, referencedColumns } from './expressions.js';
export type { FitOutput } from './fit.js';
export type { FoldsOutput } from './folds.js';
export type { HeadlineOutput } from './headline.js';
export type { HoldoutOutput } from './holdout.js';
export { cellLabel, engineFor, gridCells, gridWithDefaults, modelKinds, modelSchema, varyingParams } from './model-kinds.js';
export type { GridValue } from './model-kinds.js';
export type { ColumnProfile } from './profile.js';
export { profileFrame } from './profile.js';
export { ROW_COLUMN } from './new-rows.js';
export { BLOCK_COLUMN, blockName, unitColumn } from './split-util.js';
export { READERS, readDefaults, readRequest, type SourceParams } from './source.js';
export { readHeaderLine } from './readers/csv.js';
export { COMMON_ENCODINGS, StrictTextStream, decodeStrict, encodingName } from './readers/text-decode.js';
export { parseValue } from './readers/values.js';
export type { ScoreOutput } from './score.js';
export type { IntervalFoldOutput } from './interval-fold.js';
export type { PredictionIntervalOutput } from './prediction-interval.js';
export { TARGET_SCALES, targetScaleWords } from './target-scale.js';
