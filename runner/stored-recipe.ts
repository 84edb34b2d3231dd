import { stringify } from 'yaml';
import { canonicalJson } from '../core/hash.js';
import type { Manifest } from './manifest.js';
import { DendrologError, messages, RecipeErrors } from '../core/messages.js';
import { recipeFromText } from './recipe.js';
import { modelKinds, recipeContract, type RecipeSection } from '../steps/index.js';
import type { ModelSpec, Recipe, RecipeStep } from '../core/recipe-types.js';

/**
 * The recipe a run record keeps, checked before verify or predict use it: written back in the
 * recipe's own shape and read through the same schema, normalization and meaning checks as a
 * recipe file, then compared with what was stored. A record edited by hand (a model's kind
 * removed, a step mangled) is refused with the reason instead of failing somewhere inside a step.
 *
 * Example: `recipeFromManifest(readManifest('out/lake'), 'out/lake/run-record.json').name`
 */
export function recipeFromManifest(manifest: Manifest, manifestPath: string): Recipe {
  const stored: unknown = manifest.recipe.normalized;
  // positions in the text written back here would point nowhere in the record: keep only the words,
  // which name the key (such as models.linear)
  const where = 'stored recipe';
  let recipe: Recipe;
  try {
    recipe = recipeFromText(stringify(recipeShape(stored)), where).recipe;
  } catch (e) {
    if (e instanceof RecipeErrors) {
      const words = e.problems.map((p) => (p.startsWith(`${where}:`) ? p.slice(where.length).replace(/^:\d+:\d+: /, '') : p));
      throw new DendrologError(messages.storedRecipeInvalid(manifestPath, words), 2);
    }
    if (e instanceof TypeError) throw new DendrologError(messages.storedRecipeInvalid(manifestPath, [e.message]), 2);
    throw e;
  }
  // a newer dendrolog may write out defaults an older one left implicit; everything stored must match
  if (!contains(recipe, stored)) {
    throw new DendrologError(messages.storedRecipeInvalid(manifestPath, ['it is not the normalized form dendrolog writes (a value was edited or left out)']), 2);
  }
  return recipe;
}

type Raw = Record<string, unknown>;

/** A normalized recipe written back as a recipe file would say it; null means "not given". */
function recipeShape(stored: unknown): Raw {
  if (stored === null || typeof stored !== 'object' || Array.isArray(stored)) throw new TypeError('recipe.normalized is not an object');
  const r = stored as Recipe;
  const out: Raw = { ...r };
  out.sources = Object.fromEntries(Object.entries(r.sources ?? {}).map(([name, s]) => [name, withoutNulls(s as unknown as Raw)]));
  out.clean = (r.clean ?? []).map((s, i) => stepShape('clean', s, i));
  out.features = (r.features ?? []).map((s, i) => stepShape('features', s, i));
  out.models = Object.fromEntries(Object.entries(r.models ?? {}).map(([name, m]) => [name, modelShape(m)]));
  out.evaluation = { ...r.evaluation, holdout: withoutNulls((r.evaluation?.holdout ?? {}) as unknown as Raw) };
  return withoutNulls(out);
}

/** Whether `whole` holds every value of `part`, at the same place (objects may have more keys). */
function contains(whole: unknown, part: unknown): boolean {
  if (part === null || typeof part !== 'object') return canonicalJson(whole) === canonicalJson(part);
  if (whole === null || typeof whole !== 'object' || Array.isArray(whole) !== Array.isArray(part)) return false;
  if (Array.isArray(part)) return part.length === (whole as unknown[]).length && part.every((v, i) => contains((whole as unknown[])[i], v));
  return Object.entries(part).every(([k, v]) => Object.hasOwn(whole, k) && contains((whole as Raw)[k], v));
}

/**
 * A model with the grid values that are its kind's defaults left out (normalization puts them back),
 * since some defaults, such as mtry: null, are not values a recipe may write.
 */
function modelShape(m: ModelSpec): Raw {
  if (m === null || typeof m !== 'object') return m;
  const params = Object.hasOwn(modelKinds, m.kind) ? modelKinds[m.kind].grid : {};
  const grid = Object.entries(m.grid ?? {}).filter(([k, v]) => !(Object.hasOwn(params, k) && canonicalJson([params[k].default]) === canonicalJson(v)));
  return grid.length ? { ...m, grid: Object.fromEntries(grid) } : { kind: m.kind };
}

function stepShape(section: RecipeSection, step: RecipeStep, i: number): Raw {
  if (step === null || typeof step !== 'object') throw new TypeError(`${section}[${i}] is not a step`);
  const { kind, ...params } = step;
  if (typeof kind !== 'string') throw new TypeError(`${section}[${i}] has no kind`);
  const contract = recipeContract(section, kind);
  // an unknown kind is written back as it is, for the schema to name
  return { [kind]: contract ? contract.shape(params) : params };
}

/** A copy without the keys whose value is null: the recipe file's way of not giving them. */
function withoutNulls(o: Raw): Raw {
  return Object.fromEntries(Object.entries(o ?? {}).filter(([, v]) => v !== null));
}
