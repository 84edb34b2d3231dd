/** `npm run schema`: writes schemas/recipe.v1.json from the step registry (see runner/schema.ts). */
import { writeFileSync } from 'node:fs';
import { join } from 'node:path';
import { packageRoot } from './paths.js';
import { RECIPE_SCHEMA_FILE, recipeSchema } from './schema.js';

writeFileSync(join(packageRoot(), RECIPE_SCHEMA_FILE), JSON.stringify(recipeSchema(), null, 2) + '\n');
process.stdout.write(`wrote ${RECIPE_SCHEMA_FILE}\n`);
