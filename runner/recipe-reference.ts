import { recipeSchema } from './schema.js';

/** The lines of README.md between which `npm run docs` writes the reference. */
export const RECIPE_KEYS_START = '<!-- recipe-keys:start -->';
export const RECIPE_KEYS_END = '<!-- recipe-keys:end -->';

type Schema = Record<string, unknown>;

/** One key of a recipe: its path in YAML terms, the model kind it belongs to (or ''), its schema as written and resolved. */
interface Key {
  path: string;
  only: string;
  required: boolean;
  value: Schema;
  schema: Schema;
}

const WIDTH = 100;
/** The placeholder for a key the recipe names itself, by the key holding it; `<name>` otherwise. */
const PLACEHOLDERS: Record<string, string> = { columns: '<column>', derive: '<column>', select: '<dimension>' };
/** Definitions written as a word instead of their shape, one and many. */
const NAMED: Record<string, [string, string]> = { columnName: ['column name', 'column names'] };

const isSchema = (v: unknown): v is Schema => typeof v === 'object' && v !== null && !Array.isArray(v);

/**
 * The Markdown list of every key a recipe can hold, in schema order, each with its allowed values in
 * brief (enum values, type and bounds, required, default) and the schema's description; README.md
 * holds it between RECIPE_KEYS_START and RECIPE_KEYS_END (`npm run docs` writes it there).
 *
 * `schema` is the recipe schema unless a test gives another.
 *
 * Example: one line of `recipeReference()` is
 * "- `evaluation.folds.k`: integer from 2 to 50 — Number of folds, from 2 to 50; default 5."
 */
export function recipeReference(schema: Schema = recipeSchema()): string {
  const legend =
    'A key path is written as in YAML: `<name>` (or `<column>`, `<dimension>`) stands for a name the recipe chooses, ' +
    '`[]` for each item of a list, and a model kind in parentheses marks a key of that kind only.';
  return [wrap(legend, ''), '', ...keysOf(schema, schema, '', '', new Set()).map((k) => entry(schema, k))].join('\n');
}

/** The definition's name in a `$ref: '#/definitions/name'`, or '' without one. */
const refName = (node: Schema) => (typeof node.$ref === 'string' ? node.$ref.replace(/^#\/definitions\//, '') : '');

/** The schema a `$ref` points to, with the keys written beside the `$ref` (a description) taking precedence. */
function resolve(root: Schema, node: Schema): Schema {
  const name = refName(node);
  if (name === '') return node;
  const definitions = isSchema(root.definitions) ? root.definitions : {};
  const target = Object.hasOwn(definitions, name) ? definitions[name] : undefined;
  if (!isSchema(target)) throw new Error(`recipe schema: ${String(node.$ref)} names no definition`);
  const { $ref: _ref, ...beside } = node;
  return { ...resolve(root, target), ...beside };
}

/** The model kind a branch's `if` selects, as in `if: {properties: {kind: {const: random_forest}}}`. */
function selected(branch: Schema): string {
  const props = isSchema(branch.if) && isSchema(branch.if.properties) ? branch.if.properties : {};
  return Object.values(props)
    .map((p) => (isSchema(p) && p.const !== undefined ? String(p.const) : ''))
    .filter((s) => s !== '')
    .join(', ');
}

/** Every key under node, depth first in schema order; `refs` holds the definitions being walked, against loops. */
function keysOf(root: Schema, node: Schema, path: string, only: string, refs: Set<string>): Key[] {
  if (typeof node.$ref === 'string') {
    if (refs.has(node.$ref)) return [];
    return keysOf(root, resolve(root, node), path, only, new Set([...refs, node.$ref]));
  }
  const out: Key[] = [];
  const at = (key: string) => (path ? `${path}.${key}` : key);
  const required = Array.isArray(node.required) ? node.required : [];
  const add = (key: string, value: unknown) => {
    if (!isSchema(value)) return;
    out.push({ path: at(key), only, required: required.includes(key), value, schema: resolve(root, value) });
    out.push(...keysOf(root, value, at(key), only, refs));
  };
  for (const [key, value] of Object.entries(isSchema(node.properties) ? node.properties : {})) add(key, value);
  const placeholder = PLACEHOLDERS[path.split('.').pop() ?? ''] ?? '<name>';
  for (const value of Object.values(isSchema(node.patternProperties) ? node.patternProperties : {})) add(placeholder, value);
  add(placeholder, node.additionalProperties);
  if (isSchema(node.items)) out.push(...keysOf(root, node.items, `${path}[]`, only, refs));
  const own = new Set(Object.keys(isSchema(node.properties) ? node.properties : {}));
  for (const branch of ['anyOf', 'oneOf', 'allOf'].flatMap((k) => (Array.isArray(node[k]) ? (node[k] as unknown[]) : []))) {
    if (!isSchema(branch)) continue;
    const kind = selected(branch);
    const within = (arm: string) => [kind && arm === 'else' ? `not ${kind}` : kind, only].filter((s) => s !== '').join(', ');
    // a conditional branch repeats the parent's own keys only to allow them beside its own
    const arms = ['then', 'else'].flatMap((arm) => (isSchema(branch[arm]) ? keysOf(root, branch[arm] as Schema, path, within(arm), refs) : []));
    const keys = [...keysOf(root, branch, path, only, refs), ...arms];
    out.push(...keys.filter((k) => !(k.only !== only && own.has(k.path.slice(path ? path.length + 1 : 0)))));
  }
  const seen = new Set<string>();
  return out.filter((k) => {
    const id = `${k.path} (${k.only})`;
    if (seen.has(id)) return false;
    seen.add(id);
    return true;
  });
}

/** A value as written in YAML, in a code span. */
function literal(v: unknown): string {
  const s = typeof v === 'string' && /^[\x20-\x7e]+$/.test(v) ? v : JSON.stringify(v);
  return `\`${s}\``;
}

/** "a, b or c". */
const either = (parts: string[]) => (parts.length < 2 ? parts.join('') : `${parts.slice(0, -1).join(', ')} or ${parts[parts.length - 1]}`);

const TYPES: Record<string, string> = { string: 'text', number: 'number', integer: 'integer', boolean: '`true` or `false`', null: 'null', object: 'mapping', array: 'list' };

/** Bounds of a number, as "from 1 to 64", "≥ 0" or "> 0 and ≤ 1". */
function bounds(s: Schema): string {
  const n = (k: string) => (typeof s[k] === 'number' ? (s[k] as number) : undefined);
  const [min, max, xmin, xmax] = [n('minimum'), n('maximum'), n('exclusiveMinimum'), n('exclusiveMaximum')];
  if (min !== undefined && max !== undefined) return ` from ${min} to ${max}`;
  const parts = [
    min !== undefined ? `≥ ${min}` : xmin !== undefined ? `> ${xmin}` : '',
    max !== undefined ? `≤ ${max}` : xmax !== undefined ? `< ${xmax}` : '',
  ].filter((p) => p !== '');
  return parts.length ? ` ${parts.join(' and ')}` : '';
}

/** The allowed values of a key in brief: enum values, a constant, or a type with its bounds; `many` for a list's items. */
function brief(root: Schema, value: Schema, many = false): string {
  if (Object.hasOwn(NAMED, refName(value))) return NAMED[refName(value)][many ? 1 : 0];
  const s = resolve(root, value);
  if (Array.isArray(s.enum)) return s.enum.map(literal).join(' | ');
  if (s.const !== undefined) return literal(s.const);
  const branches = (Array.isArray(s.anyOf) ? s.anyOf : Array.isArray(s.oneOf) ? s.oneOf : []).filter(isSchema);
  if (branches.length > 0) {
    const [first, second] = branches.map((b) => resolve(root, b));
    // one value or a list of such values, as a grid gives its hyperparameters
    if (branches.length === 2 && second.type === 'array' && isSchema(second.items) && brief(root, second.items) === brief(root, first)) {
      return `${brief(root, first)}, or a list of them`;
    }
    return either(branches.map((b) => brief(root, b)));
  }
  const types = (Array.isArray(s.type) ? s.type : [s.type]).filter((t): t is string => typeof t === 'string');
  if (types.length !== 1) return either(types.map((t) => TYPES[t] ?? t));
  const type = types[0];
  if (type === 'number' || type === 'integer') return type + bounds(s);
  if (type === 'string') return typeof s.maxLength === 'number' ? `text, up to ${s.maxLength} characters` : 'text';
  if (type === 'array') {
    const item = isSchema(s.items) ? brief(root, s.items, true) : 'values';
    if (typeof s.minItems === 'number' && s.minItems === s.maxItems) return `list of ${s.minItems} (${item})`;
    return `${typeof s.minItems === 'number' && s.minItems > 0 ? 'non-empty ' : ''}list of ${item}`;
  }
  if (type === 'object') {
    const size = s.minProperties === 1 && s.maxProperties === 1 ? 'one-key ' : typeof s.minProperties === 'number' && s.minProperties > 0 ? 'non-empty ' : '';
    return `${size}mapping${many ? 's' : ''}`;
  }
  return TYPES[type] ?? type;
}

/** A description as Markdown text: on one line, with what GitHub would read as a tag or emphasis escaped. */
const markdown = (text: string) =>
  text
    .replace(/\s+/g, ' ')
    .trim()
    .replace(/\\(?=[!-/:-@[-`{-~])|<(?=[A-Za-z/!?])|\*/g, (c) => `\\${c}`);

/** One key as a list item: path, kind, allowed values, required and default, then its description. */
function entry(root: Schema, key: Key): string {
  const facts = [brief(root, key.value), key.required ? 'required' : '', key.schema.default !== undefined ? `default ${literal(key.schema.default)}` : '']
    .filter((f) => f !== '')
    .join(', ');
  const head = `\`${key.path}\`${key.only ? ` (${key.only})` : ''}`;
  const description = typeof key.schema.description === 'string' ? markdown(key.schema.description) : '';
  return wrap(`- ${head}: ${facts}${description ? ` — ${description}` : ''}`, '  ');
}

/** Text wrapped at WIDTH columns, breaking only at spaces outside code spans; later lines start with indent. */
function wrap(text: string, indent: string): string {
  const words: string[] = [];
  let inCode = false;
  let word = '';
  for (const c of text) {
    if (c === '`') inCode = !inCode;
    if (c === ' ' && !inCode) {
      words.push(word);
      word = '';
    } else word += c;
  }
  words.push(word);
  const lines: string[] = [];
  let line = '';
  for (const w of words.filter((w) => w !== '')) {
    // a word such as "-", "1." or "#" would start a list or heading at the head of a line
    if (line && line.length + 1 + w.length > WIDTH && !/^(?:[-+*>]|#{1,6}|\d{1,9}[.)]|=+|-+)$/.test(w)) {
      lines.push(line);
      line = indent + w;
    } else line = line ? `${line} ${w}` : w;
  }
  lines.push(line);
  return lines.join('\n');
}
