/** `npm run docs`: rewrites README.md's list of recipe keys, between its markers, from the recipe schema (see runner/recipe-reference.ts). */
import { readFileSync, writeFileSync } from 'node:fs';
import { join } from 'node:path';
import { packageRoot } from './paths.js';
import { RECIPE_KEYS_END, RECIPE_KEYS_START, recipeReference } from './recipe-reference.js';

const file = join(packageRoot(), 'README.md');
const readme = readFileSync(file, 'utf8');
const marker = (m: string) => new RegExp(`^${m.replace(/[.*+?^${}()|[\]\\]/g, '\\$&')}$`, 'gm');
const starts = [...readme.matchAll(marker(RECIPE_KEYS_START))];
const ends = [...readme.matchAll(marker(RECIPE_KEYS_END))];
if (starts.length !== 1 || ends.length !== 1 || ends[0].index < starts[0].index) {
  process.stderr.write(
    `README.md: expected one line "${RECIPE_KEYS_START}" and, after it, one line "${RECIPE_KEYS_END}" ` +
      `(found ${starts.length} and ${ends.length}); put them back in the "Recipe keys" section, then run npm run docs again\n`,
  );
  process.exit(1);
}
const from = starts[0].index + RECIPE_KEYS_START.length;
writeFileSync(file, `${readme.slice(0, from)}\n\n${recipeReference()}\n\n${readme.slice(ends[0].index)}`);
process.stdout.write('wrote the recipe keys in README.md\n');
