import { readFileSync } from 'node:fs';
import { join } from 'node:path';
import { describe, expect, it } from 'vitest';
import { packageRoot } from '../../runner/paths.js';
import { RECIPE_SCHEMA_FILE, recipeSchema } from '../../runner/schema.js';
import { recipeKinds } from '../../steps/index.js';

describe('the recipe schema', () => {
  it('is written as the step registry says: run "npm run schema" after adding or changing a step kind', () => {
    const committed = JSON.parse(readFileSync(join(packageRoot(), RECIPE_SCHEMA_FILE), 'utf8'));
    expect(committed).toEqual(recipeSchema());
  });

  it('lists every cleaning step of the registry, and nothing else, under clean', () => {
    expect(Object.keys(recipeSchema().definitions.cleanStep.properties as object).sort()).toEqual(recipeKinds('clean').map(([k]) => k).sort());
  });
});
