import { Ajv, type ErrorObject } from 'ajv';
import { messages } from '../core/messages.js';
import { recipeSchema } from './schema.js';
import { closest } from '../core/suggest.js';
import type { PositionedDocument } from './yaml-read.js';

let compiled: ReturnType<Ajv['compile']> | undefined;

function validator(): ReturnType<Ajv['compile']> {
  if (!compiled) {
    const schema = recipeSchema();
    const ajv = new Ajv({ allErrors: true, verbose: true, strict: false });
    compiled = ajv.compile(schema);
  }
  return compiled;
}

/**
 * Checks a recipe document against schemas/recipe.v1.json; returns one `file:line:column: message` per problem.
 *
 * Example: an unknown key `predictor:` gives `lake.yaml:12:1: unknown key "predictor" in the recipe; did you mean "predictors"?`
 */
export function validateRecipe(doc: PositionedDocument): string[] {
  const validate = validator();
  // YAML reads .inf, .nan and literals beyond ±1.8e308 (1e309) as non-finite numbers; the schema
  // refuses them too, but would call Infinity "null" (its JSON form), so they are named here first
  const nonFinite = nonFiniteNumbers(doc.value);
  const nonFiniteProblems = nonFinite.map((f) => `${doc.where(f.path)}: ${messages.recipeNumberNotFinite(describePath(f.path), f.value)}`);
  if (validate(doc.value)) return nonFiniteProblems;
  const nonFinitePointers = nonFinite.map((f) => '/' + f.path.map((s) => String(s).replace(/~/g, '~0').replace(/\//g, '~1')).join('/'));
  // a schema error at a non-finite value, or about the value or list holding it, says nothing more
  const aboutNonFinite = (e: ErrorObject) =>
    e.keyword !== 'additionalProperties' &&
    e.keyword !== 'required' &&
    nonFinitePointers.some((p) => p === e.instancePath || p.startsWith(e.instancePath + '/'));
  // propertyNames failures arrive twice: as a pattern error naming the key, and as this wrapper
  const errors = (validate.errors ?? []).filter((e) => e.keyword !== 'if' && e.keyword !== 'propertyNames' && !aboutNonFinite(e));
  const paths = errors.map((e) => e.instancePath);
  // Branch errors of anyOf at a path are noise when a deeper path explains the failure.
  const hasDeeper = (p: string): boolean => paths.some((q) => q.startsWith(p + '/'));
  const byPath = new Map<string, ErrorObject[]>();
  for (const e of errors) {
    const structural = e.keyword === 'additionalProperties' || e.keyword === 'required';
    if (!structural && hasDeeper(e.instancePath)) continue;
    const list = byPath.get(e.instancePath) ?? [];
    list.push(e);
    byPath.set(e.instancePath, list);
  }
  // a misspelt required key shows up twice (unknown + missing); the "did you mean" line says it all
  const misspelt = new Set<string>();
  for (const e of errors) {
    if (e.keyword !== 'additionalProperties') continue;
    const props = Object.keys(((e.parentSchema as Record<string, unknown>)?.properties as object) ?? {});
    const near = closest(String((e.params as Record<string, unknown>).additionalProperty), props);
    if (near) misspelt.add(`${e.instancePath}/${near}`);
  }
  for (const [pointer, list] of byPath) {
    byPath.set(
      pointer,
      list.filter((e) => !(e.keyword === 'required' && misspelt.has(`${pointer}/${(e.params as Record<string, unknown>).missingProperty}`))),
    );
  }
  const out: { pos: string; msg: string }[] = [];
  for (const [pointer, list] of byPath) {
    const path = splitPointer(pointer);
    const name = describePath(path);
    const anyOf = list.some((e) => e.keyword === 'anyOf');
    // a mapping where a mapping is one of the choices: its unknown or missing keys say what is wrong
    const structural = list.filter((e) => e.keyword === 'additionalProperties' || e.keyword === 'required');
    if (anyOf && structural.length > 0) {
      for (const e of structural) out.push(describeError(e, path, name, doc));
      continue;
    }
    if (anyOf) {
      out.push({ pos: doc.where(path), msg: messages.wrongType(name, expectedOf(list), valueAt(doc.value, path)) });
      continue;
    }
    for (const e of list) out.push(describeError(e, path, name, doc));
  }
  const seen = new Set<string>();
  return [...nonFiniteProblems, ...out.map((o) => `${o.pos}: ${o.msg}`)]
    .filter((s) => (seen.has(s) ? false : (seen.add(s), true)))
    .sort(byPosition);
}

function describeError(e: ErrorObject, path: (string | number)[], name: string, doc: PositionedDocument) {
  const value = valueAt(doc.value, path);
  const p = e.params as Record<string, unknown>;
  switch (e.keyword) {
    case 'additionalProperties': {
      const key = String(p.additionalProperty);
      const props = Object.keys(((e.parentSchema as Record<string, unknown>)?.properties as object) ?? {});
      const allowed = props;
      return {
        pos: doc.whereKey([...path, key]),
        msg: messages.unknownKey(key, containerName(path), closest(key, allowed), allowed),
      };
    }
    case 'required':
      return { pos: doc.where(path), msg: messages.missingKey(String(p.missingProperty), containerName(path)) };
    case 'type':
      return { pos: doc.where(path), msg: messages.wrongType(name, article(String(p.type)), value) };
    case 'enum': {
      const allowed = (p.allowedValues as unknown[]) ?? [];
      const sug = typeof value === 'string' ? closest(value, allowed.map(String)) : undefined;
      return { pos: doc.where(path), msg: messages.notInList(name, value, allowed, sug) };
    }
    case 'const':
      if (path.length === 1 && path[0] === 'dendrolog') {
        return { pos: doc.where(path), msg: messages.unsupportedVersion(value) };
      }
      return { pos: doc.where(path), msg: messages.notInList(name, value, [p.allowedValue]) };
    case 'minimum':
    case 'maximum':
    case 'exclusiveMinimum':
    case 'exclusiveMaximum': {
      const rule = {
        minimum: 'at least',
        maximum: 'at most',
        exclusiveMinimum: 'greater than',
        exclusiveMaximum: 'less than',
      }[e.keyword];
      return { pos: doc.where(path), msg: messages.outOfRange(name, value, `${rule} ${p.limit}`) };
    }
    case 'pattern':
      // a key that breaks a naming rule: point at the key itself and say the rule once
      if (e.propertyName !== undefined) {
        return { pos: doc.whereKey([...path, e.propertyName]), msg: messages.badName(e.propertyName, name, path[0] === 'models') };
      }
      if (path[0] === 'name') return { pos: doc.where(path), msg: messages.badSlug(name, value) };
      if (path[path.length - 1] === 'sha256') return { pos: doc.where(path), msg: messages.badSha256(name, value) };
      return { pos: doc.where(path), msg: messages.schemaOther(name, `${JSON.stringify(value)} does not match ${String(p.pattern)}`) };
    case 'minItems':
      return { pos: doc.where(path), msg: messages.outOfRange(name, value, `a list of at least ${p.limit} item(s)`) };
    case 'uniqueItems':
      return { pos: doc.where(path), msg: messages.listRepeats(name) };
    case 'minProperties':
      return { pos: doc.where(path), msg: messages.emptyMapping(name) };
    case 'maxProperties':
      return { pos: doc.where(path), msg: messages.oneStepPerItem(name) };
    case 'minLength':
      return { pos: doc.where(path), msg: messages.emptyText(name) };
    case 'maxLength':
      return { pos: doc.where(path), msg: messages.textTooLong(name, Number(p.limit)) };
    default:
      return { pos: doc.where(path), msg: messages.schemaOther(name, `${e.message ?? 'is not valid'}`) };
  }
}


/** Every number in a parsed document that is not finite, with its path. */
function nonFiniteNumbers(root: unknown): { path: (string | number)[]; value: number }[] {
  const found: { path: (string | number)[]; value: number }[] = [];
  const walk = (v: unknown, path: (string | number)[]) => {
    if (typeof v === 'number') {
      if (!Number.isFinite(v)) found.push({ path, value: v });
    } else if (Array.isArray(v)) v.forEach((x, i) => walk(x, [...path, i]));
    else if (v !== null && typeof v === 'object') for (const [k, x] of Object.entries(v)) walk(x, [...path, k]);
  };
  walk(root, []);
  return found;
}

function expectedOf(list: ErrorObject[]): string {
  const parts: string[] = [];
  for (const e of list) {
    const p = e.params as Record<string, unknown>;
    if (e.keyword === 'type') parts.push(article(String(p.type)));
    else if (e.keyword === 'const') parts.push(JSON.stringify(p.allowedValue));
    else if (e.keyword === 'enum') parts.push(...((p.allowedValues as unknown[]) ?? []).map((v) => JSON.stringify(v)));
    else if (e.keyword === 'minimum') parts.push(`at least ${p.limit}`);
    else if (e.keyword === 'maximum') parts.push(`at most ${p.limit}`);
  }
  return [...new Set(parts)].join(' or ') || 'a valid value';
}

function article(type: string): string {
  const names: Record<string, string> = {
    integer: 'a whole number',
    number: 'a number',
    string: 'text',
    boolean: 'true or false',
    null: 'null',
    array: 'a list',
    object: 'a mapping of keys to values',
  };
  return type
    .split(',')
    .map((t) => names[t] ?? t)
    .join(' or ');
}

function splitPointer(pointer: string): (string | number)[] {
  if (pointer === '') return [];
  return pointer
    .slice(1)
    .split('/')
    .map((s) => s.replace(/~1/g, '/').replace(/~0/g, '~'))
    .map((s) => (/^\d+$/.test(s) ? Number(s) : s));
}

/** `['models', 'forest', 'grid', 'mtry', 1]` → `models.forest.grid.mtry[1]` */
export function describePath(path: (string | number)[]): string {
  if (path.length === 0) return 'the recipe';
  return path.map((s, i) => (typeof s === 'number' ? `[${s}]` : i === 0 ? s : `.${s}`)).join('');
}

function containerName(path: (string | number)[]): string {
  if (path.length === 0) return 'the recipe';
  if ((path[0] === 'clean' || path[0] === 'features') && path.length === 2) {
    return `${describePath(path)} (a ${path[0] === 'clean' ? 'clean' : 'feature'} step)`;
  }
  return describePath(path);
}

function valueAt(root: unknown, path: (string | number)[]): unknown {
  let v: unknown = root;
  for (const s of path) {
    if (v === null || typeof v !== 'object') return undefined;
    v = (v as Record<string | number, unknown>)[s];
  }
  return v;
}

function byPosition(a: string, b: string): number {
  const pa = /:(\d+):(\d+):/.exec(a);
  const pb = /:(\d+):(\d+):/.exec(b);
  if (!pa || !pb) return 0;
  return Number(pa[1]) - Number(pb[1]) || Number(pa[2]) - Number(pb[2]);
}
