import { join } from 'node:path';
import { describe, expect, it } from 'vitest';
import { messages, RecipeErrors } from '../../core/messages.js';
import { DEFAULT_MISSING } from '../../runner/normalize.js';
import { DEFAULT_MIN_LEAF, DEFAULT_REPLACE, DEFAULT_SAMPLE_FRACTION } from '../../models/defaults.js';
import { displayOf, loadRecipe } from '../../runner/recipe.js';
import { makeFolder, SMALL_RECIPE, smallData } from '../helpers.js';

/** Loads a recipe text (with the small data beside it) and returns its problems, [] when valid. */
function problemsOf(recipeText: string, extra: Record<string, string> = {}): { file: string; problems: string[] } {
  const dir = makeFolder({ 'recipe.yaml': recipeText, 'data/obs.csv': smallData(), ...extra });
  const path = join(dir, 'recipe.yaml');
  const file = displayOf(path);
  try {
    loadRecipe(path, { checkFiles: true });
    return { file, problems: [] };
  } catch (e) {
    if (e instanceof RecipeErrors) return { file, problems: e.problems };
    throw e;
  }
}

/** 1-based line of the first line of text containing needle. */
function lineOf(text: string, needle: string): number {
  return text.split('\n').findIndex((l) => l.includes(needle)) + 1;
}

/** 1-based column where needle starts on its line. */
function colOf(text: string, needle: string): number {
  return text.split('\n')[lineOf(text, needle) - 1].indexOf(needle) + 1;
}

const esc = (s: string) => s.replace(/[.*+?^${}()|[\]\\]/g, '\\$&');

describe('reading and validating a recipe', () => {
  it('accepts the small recipe', () => {
    expect(problemsOf(SMALL_RECIPE).problems).toEqual([]);
  });

  it('names an unknown key with its line and column and suggests the near miss', () => {
    const text = SMALL_RECIPE.replace('groups: site', 'grups: site');
    const { file, problems } = problemsOf(text);
    const line = lineOf(text, 'grups:');
    expect(problems).toContain(
      `${file}:${line}:1: ${messages.unknownKey('grups', 'the recipe', 'groups', [])}`,
    );
  });

  it('reports a misspelt required key once, as unknown with a suggestion', () => {
    const text = SMALL_RECIPE.replace('predictors:', 'predictor:');
    const { file, problems } = problemsOf(text);
    expect(problems).toEqual([`${file}:${lineOf(text, 'predictor:')}:1: ${messages.unknownKey('predictor', 'the recipe', 'predictors', [])}`]);
  });

  it('names an unknown clean step kind inside its list item', () => {
    const text = SMALL_RECIPE + 'clean:\n  - drop_mising: [y]\n';
    const { file, problems } = problemsOf(text);
    const line = lineOf(text, 'drop_mising');
    expect(problems).toEqual([
      `${file}:${line}:5: ${messages.unknownKey('drop_mising', 'clean[0] (a clean step)', 'drop_missing', [])}`,
    ]);
  });

  it('reports a YAML syntax error with its position', () => {
    const text = SMALL_RECIPE.replace('predictors: [x1, x2]', 'predictors: [x1, x2');
    const { file, problems } = problemsOf(text);
    expect(problems.length).toBeGreaterThan(0);
    expect(problems[0]).toMatch(new RegExp(`^${esc(file)}:\\d+:\\d+: YAML syntax error: .+; fix the YAML at this position$`));
  });

  it('reports a duplicate key at the second occurrence', () => {
    const text = SMALL_RECIPE.replace('seed: 3\n', 'seed: 3\nseed: 4\n');
    const { file, problems } = problemsOf(text);
    expect(problems).toEqual([`${file}:${lineOf(text, 'seed: 4')}:1: ${messages.yamlDuplicateKey('seed')}`]);
  });

  it('reports a wrong type at the value', () => {
    const text = SMALL_RECIPE.replace('seed: 3', 'seed: seven');
    const { file, problems } = problemsOf(text);
    expect(problems).toEqual([`${file}:${lineOf(text, 'seed:')}:7: ${messages.wrongType('seed', 'a whole number', 'seven')}`]);
  });

  it('suggests the right model kind for a typo', () => {
    const text = SMALL_RECIPE.replace('linear: {kind: linear}', 'linear: {kind: lineer}');
    const { file, problems } = problemsOf(text);
    const line = lineOf(text, 'lineer');
    expect(problems[0]).toBe(
      `${file}:${line}:18: ${messages.notInList('models.linear.kind', 'lineer', ['random_forest', 'decision_tree', 'linear', 'mean'], 'linear')}`,
    );
  });

  it('rejects a hyperparameter the model kind does not have', () => {
    const text = SMALL_RECIPE.replace('mean: {kind: mean}', 'tree: {kind: decision_tree, grid: {max_dept: [2]}}');
    const { file, problems } = problemsOf(text);
    expect(problems).toEqual([
      `${file}:${lineOf(text, 'max_dept')}:${colOf(text, 'max_dept')}: ${messages.unknownKey('max_dept', 'models.tree.grid', 'max_depth', [])}`,
    ]);
  });

  it('rejects an unsupported format version', () => {
    const { file, problems } = problemsOf(SMALL_RECIPE.replace('dendrolog: 1', 'dendrolog: 2'));
    expect(problems).toEqual([`${file}:1:12: ${messages.unsupportedVersion(2)}`]);
  });

  it('names a missing source file and where the recipe gives it', () => {
    const text = SMALL_RECIPE.replace('data/obs.csv', 'data/missing.csv');
    const { file, problems } = problemsOf(text);
    expect(problems).toHaveLength(1);
    expect(problems[0]).toMatch(new RegExp(`^${esc(file)}:${lineOf(text, 'missing.csv')}:11: `));
    expect(problems[0]).toContain('source file "data/missing.csv" was not found');
  });

  it('refuses a source path that leaves the recipe folder', () => {
    const text = SMALL_RECIPE.replace('data/obs.csv', '../obs.csv');
    const { file, problems } = problemsOf(text);
    expect(problems).toEqual([`${file}:${lineOf(text, '../obs.csv')}:11: ${messages.sourcePathEscapes('../obs.csv')}`]);
  });

  it('reports an expression that does not compile', () => {
    const text = SMALL_RECIPE + 'clean:\n  - keep_rows: "d.x1 >"\n';
    const { file, problems } = problemsOf(text);
    expect(problems).toEqual([
      `${file}:${lineOf(text, 'keep_rows')}:16: ${messages.expressionCompile('d.x1 >', 'Expression parse error: d.x1 >')}`,
    ]);
  });

  it('names a column that does not exist at that step, with a suggestion', () => {
    const text = SMALL_RECIPE + 'clean:\n  - drop_missing: [x_1]\n';
    const { file, problems } = problemsOf(text);
    expect(problems).toEqual([
      `${file}:${lineOf(text, 'x_1')}:${colOf(text, 'x_1')}: ${messages.unknownColumn('x_1', 'clean[0] (drop_missing)', [], 'x1')}`,
    ]);
  });

  it('asks for one_hot when a text column is a predictor', () => {
    const text = SMALL_RECIPE.replace('predictors: [x1, x2]', 'predictors: [x1, site]');
    const { file, problems } = problemsOf(text);
    expect(problems).toEqual([`${file}:${lineOf(text, 'predictors')}:18: ${messages.categoryPredictorNeedsEncoding('site')}`]);
  });

  it('refuses a learned feature step on a column that is not a predictor, at the column', () => {
    const text = SMALL_RECIPE + 'features:\n  - standardize: {columns: [x1, y]}\n';
    const { file, problems } = problemsOf(text);
    const at = text.lastIndexOf('y]');
    const line = text.slice(0, at).split('\n').length;
    const col = at - text.lastIndexOf('\n', at - 1);
    expect(problems).toEqual([`${file}:${line}:${col}: ${messages.learnedNotPredictor('y', 'features[0] (standardize)')}`]);
  });

  it('refuses a holdout gap without a time holdout, at the gap', () => {
    const text = SMALL_RECIPE.replace('evaluation:\n', 'evaluation:\n  holdout: {gap: 7}\n');
    const { file, problems } = problemsOf(text);
    expect(problems).toEqual([`${file}:${lineOf(text, 'gap: 7')}:${colOf(text, '7}')}: ${messages.schemaOther('evaluation.holdout.gap', 'only applies with by: time; remove it or set by: time')}`]);
  });

  it('refuses a target scale it cannot undo, at the value, with the ones it can', () => {
    const text = SMALL_RECIPE.replace('target: y', 'target: y\ntarget_scale: log2');
    const { file, problems } = problemsOf(text);
    expect(problems).toEqual([`${file}:${lineOf(text, 'log2')}:${colOf(text, 'log2')}: target_scale is "log2", which is not one of "log10", "ln", "log1p"; did you mean "log10"?`]);
  });

  it('refuses a grid larger than the limit', () => {
    const text =
      SMALL_RECIPE.replace('mean: {kind: mean}', 'forest: {kind: random_forest, grid: {min_leaf: [1, 2, 3], mtry: [1, 2]}}') +
      '  max_cells: 4\n';
    const { problems } = problemsOf(text);
    expect(problems).toHaveLength(1);
    expect(problems[0]).toContain(messages.gridTooLarge(7, 4));
  });

  it('fills every default when normalizing', () => {
    const dir = makeFolder({ 'recipe.yaml': SMALL_RECIPE, 'data/obs.csv': smallData() });
    const { recipe } = loadRecipe(join(dir, 'recipe.yaml'));
    expect(recipe.title).toBe('small');
    expect(recipe.sources.obs.missing).toEqual(DEFAULT_MISSING);
    expect(recipe.sources.obs.format).toBe('csv');
    expect(recipe.sources.obs.sha256).toBeNull();
    expect(recipe.evaluation.holdout).toEqual({ by: 'groups', fraction: 0.2, cutoff: null, gap: 0 });
    expect(recipe.evaluation.folds).toEqual({ k: 3, by: 'groups', gap: 0 });
    expect(recipe.evaluation.choose_by).toBe('rmse');
    expect(recipe.time).toBeNull();
    expect(recipe.report.folder).toBe('out');
    expect(recipe.models.linear.grid).toEqual({});
  });

  it('writes out forest defaults as lists', () => {
    const dir = makeFolder({
      'recipe.yaml': SMALL_RECIPE.replace('mean: {kind: mean}', 'forest: {kind: random_forest, grid: {trees: 50}}'),
      'data/obs.csv': smallData(),
    });
    const { recipe } = loadRecipe(join(dir, 'recipe.yaml'));
    // the engine's defaults (models/defaults.ts), each as a one-value list; mtry null is one third of the predictors
    expect(recipe.models.forest.grid).toEqual({
      trees: [50],
      max_depth: [null],
      min_leaf: [DEFAULT_MIN_LEAF],
      mtry: [null],
      sample_fraction: [DEFAULT_SAMPLE_FRACTION],
      replace: [DEFAULT_REPLACE],
    });
  });
});
