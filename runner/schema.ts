import { readFileSync } from 'node:fs';
import { join } from 'node:path';
import { modelSchema, recipeKinds } from '../steps/index.js';
import { packageRoot } from './paths.js';

/** Where the recipe contract is written for people and editors. */
export const RECIPE_SCHEMA_FILE = join('schemas', 'recipe.v1.json');

/**
 * The recipe's JSON schema: schemas/recipe.v1.json with the cleaning and feature steps' parts and the model kinds taken from the step
 * registry, each kind's schema from its own definition. `npm run schema` writes the result back, and
 * a test keeps the committed file equal to it, so the file never drifts from the steps.
 *
 * Example: `recipeSchema().definitions.cleanStep.properties.within` is within's own schema.
 */
export function recipeSchema(): { definitions: Record<string, Record<string, unknown>> } & Record<string, unknown> {
  const schema = JSON.parse(readFileSync(join(packageRoot(), RECIPE_SCHEMA_FILE), 'utf8')) as ReturnType<typeof recipeSchema>;
  schema.definitions.cleanStep.properties = Object.fromEntries(recipeKinds('clean').map(([kind, c]) => [kind, c.schema]));
  schema.definitions.model = modelSchema();
  schema.definitions.featureStep.properties = Object.fromEntries(recipeKinds('features').map(([kind, c]) => [kind, c.schema]));
  return schema;
}
