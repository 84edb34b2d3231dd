import { readFileSync } from 'node:fs';
import { join } from 'node:path';
import { describe, expect, it } from 'vitest';
import { packageRoot } from '../../runner/paths.js';
import { RECIPE_SCHEMA_FILE, recipeSchema } from '../../runner/schema.js';

type Schema = Record<string, unknown>;

const isSchema = (v: unknown): v is Schema => typeof v === 'object' && v !== null && !Array.isArray(v);

/** Whether a property's schema carries text an editor can show when the key is hovered. */
const described = (v: unknown): boolean => isSchema(v) && typeof v.description === 'string' && v.description.trim() !== '';

/**
 * Every key a recipe can hold, as `{path, schema}`: the named properties, wherever they are declared
 * (definitions, anyOf/oneOf/allOf branches, the `then` and `else` of a model kind), and the value under
 * a key the recipe names itself (a source, a model, a column's type, a derived column), shown as `<any name>`.
 * A `$ref`-only property is listed too: editors show a description written beside the `$ref`.
 * The conditions of `if` and `not` declare nothing, so they are not walked.
 */
function keysOf(node: unknown, path = '', out: { path: string; schema: unknown }[] = []): { path: string; schema: unknown }[] {
  if (!isSchema(node)) return out;
  const at = (key: string) => (path ? `${path}.${key}` : key);
  if (isSchema(node.properties)) {
    for (const [key, value] of Object.entries(node.properties)) {
      out.push({ path: at(key), schema: value });
      keysOf(value, at(key), out);
    }
  }
  if (isSchema(node.patternProperties)) {
    for (const [pattern, value] of Object.entries(node.patternProperties)) {
      out.push({ path: at(`/${pattern}/`), schema: value });
      keysOf(value, at(`/${pattern}/`), out);
    }
  }
  // `additionalProperties: false` forbids keys; a schema there is the value under a key the user names
  if (isSchema(node.additionalProperties)) {
    out.push({ path: at('<any name>'), schema: node.additionalProperties });
    keysOf(node.additionalProperties, at('<any name>'), out);
  }
  if (isSchema(node.items)) keysOf(node.items, `${path}[]`, out);
  for (const key of ['anyOf', 'oneOf', 'allOf'] as const) {
    const branches = node[key];
    if (Array.isArray(branches)) branches.forEach((b, i) => keysOf(b, `${path}{${key}[${i}]}`, out));
  }
  for (const key of ['then', 'else'] as const) keysOf(node[key], `${path}{${key}}`, out);
  if (isSchema(node.definitions)) {
    for (const [name, def] of Object.entries(node.definitions)) keysOf(def, `#/definitions/${name}`, out);
  }
  return out;
}

/** The paths of keys without a non-empty description. */
function undescribed(schema: unknown): string[] {
  return keysOf(schema)
    .filter((k) => !described(k.schema))
    .map((k) => k.path);
}

const committed = (): Schema => JSON.parse(readFileSync(join(packageRoot(), RECIPE_SCHEMA_FILE), 'utf8')) as Schema;

describe('the recipe schema describes every key, for editors to show on hover', () => {
  it('as the step registry generates it (recipeSchema)', () => {
    // on failure: write a description (meaning, units or allowed values, default) in the step's or
    // model kind's schema, or in schemas/recipe.v1.json for the hand-written parts, then `npm run schema`
    expect(undescribed(recipeSchema())).toEqual([]);
  });

  it('as committed in schemas/recipe.v1.json', () => {
    expect(undescribed(committed())).toEqual([]);
  });

  it('finds the keys of steps, model kinds and hand-written definitions, and lists one that loses its description', () => {
    // a copy: the steps' schemas in it are the registry's own objects
    const schema = structuredClone(recipeSchema());
    const paths = keysOf(schema).map((k) => k.path);
    expect(paths).toEqual(
      expect.arrayContaining([
        'sources.<any name>',
        'report.folder',
        '#/definitions/source.file',
        '#/definitions/cleanStep.within.min',
        '#/definitions/featureStep.one_hot.max_levels',
        '#/definitions/model.kind',
        '#/definitions/model{allOf[0]}{then}.kind',
        '#/definitions/evaluation.prediction_interval{anyOf[0]}.level',
      ]),
    );
    const before = undescribed(schema);
    const source = (schema.definitions.source.properties as Record<string, Schema>).file;
    delete source.description;
    // a model kind's hyperparameter, declared in the kind's `then` branch
    const model = schema.definitions.model as { allOf: { then: { properties: { grid?: { properties: Record<string, Schema> } } } }[] };
    const k = model.allOf.findIndex((b) => b.then.properties.grid !== undefined);
    const [param, spec] = Object.entries(model.allOf[k].then.properties.grid!.properties)[0];
    spec.description = ' ';
    expect(undescribed(schema).filter((p) => !before.includes(p))).toEqual(['#/definitions/source.file', `#/definitions/model{allOf[${k}]}{then}.grid.${param}`]);
  });
});
