import { join } from 'node:path';
import { describe, expect, it } from 'vitest';
import { makeContext, type StepInstance } from '../../core/step-types.js';
import { planRecipe } from '../../runner/plan.js';
import { stepRegistry } from '../../steps/index.js';
import { loadRecipe } from '../../runner/recipe.js';
import { makeFolder, SMALL_RECIPE, smallData } from '../helpers.js';

const WITH_CLEANING =
  SMALL_RECIPE +
  `clean:
  - within: {column: x1, min: 0, max: 100}
  - drop_missing: [y]
`;

function keys(recipeText: string, data = smallData()): Map<string, string> {
  const dir = makeFolder({ 'recipe.yaml': recipeText, 'data/obs.csv': data });
  const { recipe, origin } = loadRecipe(join(dir, 'recipe.yaml'));
  return new Map(planRecipe(recipe, origin).steps.map((s) => [s.id, s.key]));
}

function changed(a: Map<string, string>, b: Map<string, string>): string[] {
  return [...a.keys()].filter((id) => a.get(id) !== b.get(id));
}

describe('step keys', () => {
  it('are the same for the same recipe and data, even in another folder', () => {
    expect(changed(keys(WITH_CLEANING), keys(WITH_CLEANING))).toEqual([]);
  });

  it('change for the edited step and everything downstream of it, nothing upstream', () => {
    const before = keys(WITH_CLEANING);
    const after = keys(WITH_CLEANING.replace('max: 100', 'max: 99'));
    const diff = changed(before, after);
    expect(diff).toContain('clean[0] within');
    expect(diff).toContain('clean[1] drop_missing');
    expect(diff).toContain('model table');
    expect(diff).toContain('score linear');
    expect(diff).not.toContain('source obs');
  });

  it('change only the model that was edited, not the other models', () => {
    const before = keys(WITH_CLEANING.replace('mean: {kind: mean}', 'tree: {kind: decision_tree, grid: {max_depth: 2}}'));
    const after = keys(WITH_CLEANING.replace('mean: {kind: mean}', 'tree: {kind: decision_tree, grid: {max_depth: 3}}'));
    // the headline step reads every model's outputs and grid, so it follows any model's edit
    expect(changed(before, after).sort()).toEqual([
      'choose tree',
      'cv tree one setting',
      'cv tree one setting fold 1',
      'cv tree one setting fold 2',
      'cv tree one setting fold 3',
      'explain tree',
      'fit tree',
      'headline',
      'interval tree fold 1',
      'interval tree fold 2',
      'interval tree fold 3',
      'prediction interval tree',
      'score tree',
    ]);
    expect(after.get('cv linear no hyperparameters')).toBe(before.get('cv linear no hyperparameters'));
  });

  it('change from the source on when one byte of the data changes', () => {
    const data = smallData();
    const before = keys(WITH_CLEANING, data);
    const after = keys(WITH_CLEANING, data.replace(/\n$/, '\nS0,1,1,1\n'));
    expect(changed(before, after)).toEqual([...before.keys()]);
  });

  it('do not change when only the title changes', () => {
    const before = keys(WITH_CLEANING);
    const after = keys(WITH_CLEANING.replace('name: small', 'name: small\ntitle: Another title'));
    expect(changed(before, after)).toEqual([]);
  });
});

describe('step keys and the seed', () => {
  it('change for random steps and their dependants when the seed changes, not for reading and cleaning', () => {
    const before = keys(WITH_CLEANING);
    const after = keys(WITH_CLEANING.replace('seed: 3', 'seed: 4'));
    const diff = changed(before, after);
    expect(diff).not.toContain('source obs');
    expect(diff).not.toContain('clean[0] within');
    expect(diff).toContain('holdout');
    expect(diff).toContain('score mean');
  });
});

describe('step instances', () => {
  it('are data: run from their JSON form alone, the seeded holdout and folds draw exactly as the originals', async () => {
    const dir = makeFolder({ 'recipe.yaml': SMALL_RECIPE.replace('seed: 3', 'seed: 11'), 'data/obs.csv': smallData() });
    const { recipe, origin } = loadRecipe(join(dir, 'recipe.yaml'));
    const plan = planRecipe(recipe, origin);
    const byId = new Map(plan.steps.map((s) => [s.id, s]));
    const outputs = new Map<string, unknown>();
    // run the data steps and the splits twice: from the instances, and from JSON copies of them
    const runAll = async (copy: boolean) => {
      outputs.clear();
      for (const id of [...plan.dataSteps, 'holdout', 'folds']) {
        const step = copy ? (JSON.parse(JSON.stringify(byId.get(id))) as StepInstance) : byId.get(id)!;
        const out = await stepRegistry[step.kind].run(step.inputs.map((i) => outputs.get(i)), step.params as never, makeContext(step, { warn: () => {}, workers: 1 }));
        outputs.set(step.id, out);
      }
      return { holdout: outputs.get('holdout'), folds: outputs.get('folds') };
    };
    const a = await runAll(false);
    const b = await runAll(true);
    expect(b).toEqual(a);
    expect(byId.get('holdout')!.seed).toBe(11);
  });
});

describe('model kinds in the plan', () => {
  it('get an explanation step when their kind can be explained, and none for the constant mean', () => {
    const dir = makeFolder({ 'recipe.yaml': SMALL_RECIPE.replace('  mean: {kind: mean}', '  mean: {kind: mean}\n  tree: {kind: decision_tree, grid: {max_depth: 2}}'), 'data/obs.csv': smallData() });
    const { recipe, origin } = loadRecipe(join(dir, 'recipe.yaml'));
    const plan = planRecipe(recipe, origin);
    // permutation importance of a model that ignores its predictors is zero by construction
    expect(Object.fromEntries(Object.entries(plan.models).map(([name, ids]) => [name, ids.explain !== null]))).toEqual({ linear: true, mean: false, tree: true });
  });
});

describe('a grid of one cell', () => {
  const planOf = (grid: string) => {
    const dir = makeFolder({ 'recipe.yaml': SMALL_RECIPE.replace('  mean: {kind: mean}', `  mean: {kind: mean}\n  tree: {kind: decision_tree, grid: ${grid}}`), 'data/obs.csv': smallData() });
    const { recipe, origin } = loadRecipe(join(dir, 'recipe.yaml'));
    return new Map(planRecipe(recipe, origin).steps.map((s) => [s.id, s]));
  };

  it('has nothing to choose: its final fit and interval folds take the cell and wait for no cross-validation', () => {
    const one = planOf('{max_depth: 2}');
    expect(one.get('fit tree')!.inputs).toEqual(['model table', 'holdout']);
    expect(one.get('interval tree fold 1')!.inputs).toEqual(['model table', 'holdout', 'folds']);
    expect((one.get('fit tree')!.params as { cell: unknown }).cell).toEqual({ max_depth: 2, min_leaf: expect.any(Number) });
    const two = planOf('{max_depth: [2, 3]}');
    expect(two.get('fit tree')!.inputs).toEqual(['model table', 'holdout', 'choose tree']);
    expect('cell' in (two.get('fit tree')!.params as object)).toBe(false);
  });

  it('draws as that cell does when chosen from a larger grid: the cell stays out of the seed key', () => {
    const one = planOf('{max_depth: 2}');
    const two = planOf('{max_depth: [2, 3]}');
    for (const id of ['fit tree', 'interval tree fold 2']) expect(one.get(id)!.seedKey).toBe(two.get(id)!.seedKey);
    // and the parameter still tells caches apart
    expect(one.get('fit tree')!.key).not.toBe(two.get('fit tree')!.key);
  });
});

describe('the headline step', () => {
  it('comes last and reads the model table, the holdout and each model’s choose, fit and score outputs in recipe order', () => {
    const dir = makeFolder({ 'recipe.yaml': SMALL_RECIPE, 'data/obs.csv': smallData() });
    const { recipe, origin } = loadRecipe(join(dir, 'recipe.yaml'));
    const plan = planRecipe(recipe, origin);
    const last = plan.steps[plan.steps.length - 1];
    expect(last.id).toBe(plan.headline);
    expect(last.kind).toBe('headline');
    expect(last.inputs).toEqual(['model table', 'holdout', 'choose linear', 'fit linear', 'score linear', 'choose mean', 'fit mean', 'score mean']);
    expect((last.params as { models: unknown }).models).toEqual([
      { name: 'linear', kind: 'linear', grid: recipe.models.linear.grid },
      { name: 'mean', kind: 'mean', grid: recipe.models.mean.grid },
    ]);
  });
});
