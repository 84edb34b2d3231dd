/**
 * Names that are also members of every JavaScript object (`__proto__`, `constructor`, `toString`,
 * `hasOwnProperty`, `valueOf`) used everywhere a user chooses a name: sources, columns in the
 * recipe and in the data file's header, derived columns, models, category levels and group values.
 * A name-keyed lookup on a plain object would drop them or read Object.prototype's members as data.
 */
import { readFileSync } from 'node:fs';
import { join } from 'node:path';
import { describe, expect, it } from 'vitest';
import { canonicalJson } from '../../core/hash.js';
import { dict, parseJson } from '../../core/dict.js';
import { messages } from '../../core/messages.js';
import type { ColumnType } from '../../core/recipe-types.js';
import { readSource, fileWith, plain } from '../steps/readers/helpers.js';
import { displayOf } from '../../runner/recipe.js';
import { expectOutcome, lineColOf, scenario } from './harness.js';
import { SMALL_RECIPE, smallData } from '../helpers.js';
import { timeDecoder } from '../../steps/readers/cf.js';

const RESERVED = ['__proto__', 'constructor', 'toString', 'hasOwnProperty', 'valueOf'];

/** y = 2·__proto__ − constructor + a level effect of toString; groups in valueOf; a second source keyed by valueOf. */
function data(): { main: string; side: string } {
  const lines = ['valueOf,__proto__,constructor,toString,y'];
  const side = ['valueOf,hasOwnProperty'];
  for (let g = 0; g < 12; g++) {
    const group = RESERVED[g % RESERVED.length] + g;
    side.push(`${group},${(g % 4) / 2}`);
    for (let r = 0; r < 6; r++) {
      const a = ((g * 7 + r * 3) % 11) / 2;
      const b = ((g * 5 + r * 13) % 17) / 3;
      const level = RESERVED[(g + r) % 3];
      const y = 2 * a - b + [0, 1, 2][(g + r) % 3] + r * 0.01;
      lines.push(`${group},${a},${b},${level},${y.toFixed(4)}`);
    }
  }
  return { main: lines.join('\n') + '\n', side: side.join('\n') + '\n' };
}

const RECIPE = `dendrolog: 1
name: reserved
seed: 5
sources:
  constructor:
    file: data/obs.csv
    columns: {valueOf: string, __proto__: number, constructor: number, toString: category, y: number}
  __proto__:
    file: data/side.csv
    columns: {valueOf: string, hasOwnProperty: number}
join:
  - {with: __proto__, on: valueOf, keep: matched}
clean:
  - replace: {columns: [__proto__], values: [-9999], with: missing}
  - drop_missing: [constructor]
  - within: {column: __proto__, min: -100, max: 100}
features:
  - derive: {toLocaleString: "d.constructor * d['hasOwnProperty']"}
  - impute: {columns: [constructor], with: median}
  - standardize: {columns: [hasOwnProperty]}
  - one_hot: {column: toString}
target: y
predictors: [__proto__, constructor, toString, hasOwnProperty, toLocaleString]
groups: valueOf
models:
  __proto__: {kind: linear}
  constructor: {kind: decision_tree, grid: {max_depth: [2, 3]}}
  toString: {kind: mean}
  hasOwnProperty: {kind: random_forest, grid: {trees: 20}}
evaluation:
  holdout: {by: groups, fraction: 0.25}
  folds: {k: 3}
`;

describe('names that are also members of every object', () => {
  it('work as sources, columns, derived columns, models, categories and groups, end to end', async () => {
    const { main, side } = data();
    const s = scenario({ 'recipe.yaml': RECIPE, 'data/obs.csv': main, 'data/side.csv': side });
    const r = await expectOutcome(s.dir, ['run', s.recipe, '--cache', s.cache, '--workers', '1'], { code: 0, changes: ['out/reserved/'] });
    expect(r.err).toBe('');
    const manifest = JSON.parse(readFileSync(join(s.dir, 'out/reserved/run-record.json'), 'utf8'));
    const models = manifest.models as { name: string; kind: string; metrics: { holdout: { r2: { value: number | null } } } }[];
    expect(models.map((m) => [m.name, m.kind]).sort()).toEqual([
      ['__proto__', 'linear'],
      ['constructor', 'decision_tree'],
      ['hasOwnProperty', 'random_forest'],
      ['toString', 'mean'],
    ]);
    const sources = manifest.sources as { name: string; columns: { name: string }[] }[];
    expect(sources.map((x) => [x.name, x.columns.map((c) => c.name)])).toEqual([
      ['constructor', ['valueOf', '__proto__', 'constructor', 'toString', 'y']],
      ['__proto__', ['valueOf', 'hasOwnProperty']],
    ]);
    // the learned one-hot levels are the category values, read as data
    const learned = JSON.stringify(models.find((m) => m.name === '__proto__'));
    for (const level of ['toString=__proto__', 'toString=constructor', 'toString=toString']) expect(learned).toContain(level);
    const recipeSources = Object.keys(manifest.recipe.normalized.sources).sort();
    expect(recipeSources).toEqual(['__proto__', 'constructor']);
    // y is 2·__proto__ − constructor + a toString level effect plus at most 0.05, so a linear model
    // that received every column under its own name fits the holdout almost exactly
    expect(models.find((m) => m.name === '__proto__')!.metrics.holdout.r2.value).toBeGreaterThan(0.99);
    const report = readFileSync(join(s.dir, 'out/reserved/report.html'), 'utf8');
    for (const name of ['__proto__', 'constructor', 'toString', 'hasOwnProperty', 'toLocaleString']) expect(report).toContain(name);
    expect(report).not.toContain('[object Object]');
    expect(report).not.toContain('function Object()');
  });

  it('are predicted and verified from the run folder like any other name', async () => {
    const { main, side } = data();
    const s = scenario({ 'recipe.yaml': RECIPE, 'data/obs.csv': main, 'data/side.csv': side, 'new/obs.csv': main });
    await expectOutcome(s.dir, ['run', s.recipe, '--cache', s.cache, '--workers', '1'], { code: 0, changes: ['out/reserved/'] });
    const run = join(s.dir, 'out/reserved');
    const p = await expectOutcome(s.dir, ['predict', run, join(s.dir, 'new/obs.csv'), '--out', join(s.dir, 'predicted.csv')], {
      code: 0,
      changes: ['predicted.csv'],
    });
    expect(p.out).toContain('72 of 72 rows predicted, 0 not');
    await expectOutcome(s.dir, ['verify', run, '--workers', '1'], { code: 0 });
  });

  it('refuses an expression that reads a column named __proto__, at the expression', async () => {
    const text = RECIPE.replace('  - drop_missing: [constructor]\n', '  - drop_missing: [constructor]\n  - keep_rows: "d.__proto__ > 0"\n');
    const { main, side } = data();
    const s = scenario({ 'recipe.yaml': text, 'data/obs.csv': main, 'data/side.csv': side });
    await expectOutcome(s.dir, ['check', s.recipe], {
      code: 2,
      err: `${displayOf(s.recipe)}:${lineColOf(text, '"d.__proto__ > 0"')}: ${messages.expressionReservedColumn('__proto__', 'clean[2] (keep_rows)')}`,
    });
  });

  it('refuses a derived column named __proto__, at its name', async () => {
    const text = RECIPE.replace('toLocaleString: "', '__proto__x: "1", __proto__: "');
    const { main, side } = data();
    const s = scenario({ 'recipe.yaml': text, 'data/obs.csv': main, 'data/side.csv': side });
    const r = await expectOutcome(s.dir, ['check', s.recipe], { code: 2 });
    const line = text.split('\n').findIndex((l) => l.includes('__proto__x')) + 1;
    expect(r.err).toContain(`${displayOf(s.recipe)}:${line}:`);
    expect(r.err).toContain(messages.expressionReservedColumn('__proto__', 'features[0] (derive)'));
  });

  it('read a JSON record that lacks the key "constructor" as missing, not as a function', async () => {
    const path = fileWith('obs.json', JSON.stringify([{ constructor: 'a', toString: 1 }, { toString: 2 }]));
    const out = await readSource(path, { format: 'json', columns: dict<ColumnType>([['constructor', 'string'], ['toString', 'number']]), undeclared: 'error', date_format: 'YYYY-MM-DD' });
    expect(out.frame.columns.map((c) => [c.name, plain(c)])).toEqual([
      ['constructor', ['a', null]],
      ['toString', [1, 2]],
    ]);
  });

  it('keep "__proto__" as a key when hashing, so {"__proto__": 1} and {} never share a cache key', () => {
    const withKey = dict<number>([['__proto__', 1]]);
    expect(canonicalJson(withKey)).toBe('{"__proto__":1}');
    expect(canonicalJson(parseJson('{"b": {"__proto__": 2, "a": 1}}'))).toBe('{"b":{"__proto__":2,"a":1}}');
    expect(canonicalJson(withKey)).not.toBe(canonicalJson({}));
  });

  it('read back from JSON as own data, never through Object.prototype', () => {
    const v = parseJson('{"impute": {"x": 1}}') as { impute: Record<string, number> };
    expect(v.impute.constructor).toBeUndefined();
    expect(v.impute.toString).toBeUndefined();
    expect(Object.keys(parseJson('{"__proto__": {"a": 1}}') as object)).toEqual(['__proto__']);
  });

  it('read a source file whose extension is "constructor" as csv, the default for an unknown extension', async () => {
    const s = scenario({ 'recipe.yaml': SMALL_RECIPE.replace('data/obs.csv', 'data/obs.constructor'), 'data/obs.constructor': smallData() });
    await expectOutcome(s.dir, ['run', s.recipe, '--cache', s.cache, '--workers', '1'], { code: 0, changes: ['out/small/'] });
  });

  it('do not decode NetCDF time units named "constructor" or "toString"', () => {
    for (const unit of ['constructor', 'toString', '__proto__']) expect(timeDecoder(`${unit} since 2000-01-01`, undefined).ok).toBe(false);
    expect(timeDecoder('days since 2000-01-01', undefined).ok).toBe(true);
  });
});

describe('keys that YAML tells apart but a recipe cannot', () => {
  for (const [a, b] of [['true', '"true"'], ['1', '"1"'], ['null', '"null"']]) {
    it(`refuses ${a} and ${b} in one mapping, at the repeat`, async () => {
      const text = SMALL_RECIPE.replace('target: y', `features:\n  - derive: {x3: "d.x1 * 2", ${a}: "d.x2 + 1", ${b}: "d.x2 * 100"}\ntarget: y`);
      const s = scenario({ 'recipe.yaml': text });
      await expectOutcome(s.dir, ['check', s.recipe], {
        code: 2,
        err: `${displayOf(s.recipe)}:${lineColOf(text, `${b}:`)}: ${messages.yamlDuplicateKey(JSON.parse(b))}`,
      });
    });
  }
});
