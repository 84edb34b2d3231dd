import { readFileSync } from 'node:fs';
import { join } from 'node:path';
import { describe, expect, it } from 'vitest';
import { packageRoot } from '../../runner/paths.js';
import { RECIPE_KEYS_END, RECIPE_KEYS_START, recipeReference } from '../../runner/recipe-reference.js';
import { recipeSchema } from '../../runner/schema.js';

type Schema = Record<string, unknown>;

const isSchema = (v: unknown): v is Schema => typeof v === 'object' && v !== null && !Array.isArray(v);

/** The text between README.md's recipe-keys markers, or null without both. */
function readmeBlock(): string | null {
  const readme = readFileSync(join(packageRoot(), 'README.md'), 'utf8');
  const [open, close] = [`\n${RECIPE_KEYS_START}\n`, `\n${RECIPE_KEYS_END}\n`];
  const start = readme.indexOf(open);
  const end = readme.indexOf(close);
  return start < 0 || end < start ? null : readme.slice(start + open.length, end + 1);
}

/** Each list item of the reference, continuation lines joined, by its key path (and model kind, as `path (kind)`). */
function entries(reference: string): Map<string, string> {
  const items = reference.split(/\n(?=- `)/).filter((item) => item.startsWith('- `'));
  return new Map(items.map((item) => [/^- `([^`]+)`( \([^)]+\))?:/.exec(item)!.slice(1).filter(Boolean).join(''), item.replace(/\n +/g, ' ')]));
}

/** A path with every name the recipe chooses (`<name>`, `<column>`, …) written alike. */
const generic = (path: string) => path.replace(/<[^>]+>/g, '<…>');

/**
 * Every key path of the schema, followed through `$ref`s: a property under its parent with a dot, the value
 * under a key the recipe names as `<…>`, a list's items with `[]`, and anyOf/oneOf/allOf branches at their
 * parent's path; a key of an if/then branch carries the value the `if` selects, as `path (random_forest)`
 * (`not random_forest` in an else branch), unless the parent declares the key itself.
 */
function schemaPaths(root: Schema): string[] {
  const definitions = root.definitions as Record<string, Schema>;
  const deref = (s: Schema): Schema => (typeof s.$ref === 'string' ? deref(definitions[s.$ref.split('/').pop()!]) : s);
  const paths = new Set<string>();
  const visit = (raw: unknown, path: string, kind: string, parentKeys: string[]) => {
    if (!isSchema(raw)) return;
    const node = deref(raw);
    const child = (key: string) => (path === '' ? key : `${path}.${key}`);
    const declare = (key: string, value: unknown) => {
      if (kind !== '' && parentKeys.includes(key)) return;
      paths.add(kind === '' ? child(key) : `${child(key)} (${kind})`);
      visit(value, child(key), kind, []);
    };
    const own = Object.keys((node.properties as Schema | undefined) ?? {});
    for (const [key, value] of Object.entries((node.properties as Schema | undefined) ?? {})) declare(key, value);
    for (const value of Object.values((node.patternProperties as Schema | undefined) ?? {})) declare('<…>', value);
    if (isSchema(node.additionalProperties)) declare('<…>', node.additionalProperties);
    visit(node.items, `${path}[]`, kind, []);
    for (const branch of [node.anyOf, node.oneOf, node.allOf].flat()) {
      if (!isSchema(branch)) continue;
      visit(branch, path, kind, parentKeys);
      const condition = Object.values((isSchema(branch.if) && (branch.if.properties as Schema | undefined)) || {});
      const selects = condition.flatMap((c) => (isSchema(c) && c.const !== undefined ? [String(c.const)] : []));
      const then = [...selects, ...(kind ? [kind] : [])].join(', ');
      const otherwise = [...selects.map((v) => `not ${v}`), ...(kind ? [kind] : [])].join(', ');
      visit(branch.then, path, then, then === kind ? parentKeys : own);
      visit(branch.else, path, otherwise, otherwise === kind ? parentKeys : own);
    }
  };
  visit(root, '', '', []);
  return [...paths].map(generic);
}

describe('the recipe keys in README.md', () => {
  it('are the reference the schema generates', () => {
    const block = readmeBlock();
    expect(block, `README.md has no lines "${RECIPE_KEYS_START}" and "${RECIPE_KEYS_END}" in its "Recipe keys" section`).not.toBeNull();
    expect(block, 'README.md\'s "Recipe keys" differ from the recipe schema: run `npm run docs` to rewrite them').toBe(`\n${recipeReference()}\n\n`);
  });

  it('list every key path of the schema, each once', () => {
    const listed = [...entries(recipeReference()).keys()].map(generic);
    const walked = schemaPaths(recipeSchema());
    expect(walked.length).toBeGreaterThan(80);
    expect(walked.filter((p) => !listed.includes(p)), 'keys of the schema missing from the reference').toEqual([]);
    expect(listed.filter((p) => !walked.includes(p)), 'keys in the reference the schema does not have').toEqual([]);
    expect(listed.length, 'a key listed twice').toBe(new Set(listed).size);
  });

  it('give the allowed values of known keys', () => {
    const keys = entries(recipeReference());
    const entry = (path: string) => {
      expect([...keys.keys()], `no entry for ${path}`).toContain(path);
      return keys.get(path)!;
    };
    expect(entry('evaluation.holdout.by')).toContain('`random` | `groups` | `time` | `blocks` — How the holdout is drawn');
    expect(entry('evaluation.prediction_interval')).toContain('mapping or `false`');
    expect(entry('evaluation.prediction_interval.level')).toContain('number > 0 and < 1');
    expect(entry('evaluation.folds.gap')).toContain('number ≥ 0');
    expect(entry('evaluation.max_cells')).toMatch(/integer ≥ 1 — .*Default 200/);
    expect(entry('features[].one_hot.unseen')).toContain('`error` | `other`');
    expect(entry('clean[].within.min')).toContain('`clean[].within.min`: number — ');
    expect(entry('sources.<name>.columns.<column>')).toContain('`number` | `string` | `category` | `date`');
    expect(entry('sources.<name>.file')).toContain('text, required');
    expect(entry('models.<name>.grid.trees (random_forest)')).toContain('integer from 1 to 100000, or a list of them');
    expect(entry('report.folder')).toContain('\\<folder>/\\<recipe name>');
    expect(keys.has('models.<name>.kind (random_forest)'), 'a model kind repeats kind only to allow it').toBe(false);
  });

  it('write the default a schema gives', () => {
    const schema = {
      type: 'object',
      required: ['depth'],
      properties: { depth: { type: 'integer', minimum: 1, default: 3, description: 'How deep, at least 1.' } },
      definitions: {},
    };
    expect(recipeReference(schema)).toContain('- `depth`: integer ≥ 1, required, default `3` — How deep, at least 1.');
  });
});
