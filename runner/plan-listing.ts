import { resolve } from 'node:path';
import { Cache } from './cache.js';
import { planRecipe } from './plan.js';
import { loadRecipe } from './recipe.js';

/** One step a run would take: its label, kind and key, and whether the cache holds its output. */
export interface PlannedStep {
  id: string;
  kind: string;
  key: string;
  cached: boolean;
}

/**
 * What `dendrolog plan` shows: every step of the recipe's plan in order, with whether the cache
 * holds an entry at its key (its content is checked only when a run reads it). Reads the sources'
 * bytes, whose hashes are in the keys, and nothing else; writes nothing.
 *
 * Example: `planListing('lake.yaml', 'dendrolog-cache').steps.filter((s) => !s.cached).length`
 */
export function planListing(recipePath: string, cacheDir: string | null): { steps: PlannedStep[]; cache: string | null } {
  const { recipe, origin } = loadRecipe(recipePath, { checkFiles: true });
  const plan = planRecipe(recipe, origin);
  const cache = cacheDir === null ? null : new Cache(resolve(cacheDir));
  return {
    cache: cache?.dir ?? null,
    steps: plan.steps.map((s) => ({ id: s.id, kind: s.kind, key: s.key, cached: cache?.has(s) ?? false })),
  };
}
