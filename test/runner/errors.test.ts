import { createHash } from 'node:crypto';
import { cpSync, rmSync, writeFileSync } from 'node:fs';
import { join } from 'node:path';
import { afterEach, beforeAll, describe, expect, it, vi } from 'vitest';
import { main } from '../../runner/cli.js';
import { DendrologError, messages, RecipeErrors } from '../../core/messages.js';
import { predictRun } from '../../runner/predict.js';
import { silentProgress } from '../../runner/progress.js';
import { displayOf, loadRecipe } from '../../runner/recipe.js';
import { readManifest } from '../../runner/run-folder.js';
import { runRecipe } from '../../runner/run.js';
import { verifyRun } from '../../runner/verify.js';
import { errorOf, makeFolder, SMALL_RECIPE, smallData } from '../helpers.js';

/** The error loadRecipe throws for a recipe text (small data beside it), with the recipe's display path. */
function recipeError(text: string, extra: Record<string, string> = {}): { file: string; error: RecipeErrors } {
  const dir = makeFolder({ 'recipe.yaml': text, 'data/obs.csv': smallData(), ...extra });
  const path = join(dir, 'recipe.yaml');
  try {
    loadRecipe(path, { checkFiles: true });
  } catch (e) {
    if (e instanceof RecipeErrors) return { file: displayOf(path), error: e };
    throw e;
  }
  throw new Error('expected the recipe to be refused');
}

/** The problems of a refused recipe; every recipe problem is a usage error (exit code 2). */
function problemsOf(text: string, extra: Record<string, string> = {}): { file: string; problems: string[] } {
  const { file, error } = recipeError(text, extra);
  expect(error.exitCode).toBe(2);
  return { file, problems: error.problems };
}

/** 1-based line of the first line of text containing needle. */
function lineOf(text: string, needle: string): number {
  const line = text.split('\n').findIndex((l) => l.includes(needle)) + 1;
  if (line === 0) throw new Error(`no line holds ${needle}`);
  return line;
}

/** 1-based column where needle starts on its line. */
function colOf(text: string, needle: string): number {
  return text.split('\n')[lineOf(text, needle) - 1].indexOf(needle) + 1;
}

/** `file:line:column` of the first occurrence of needle in text. */
const at = (file: string, text: string, needle: string) => `${file}:${lineOf(text, needle)}:${colOf(text, needle)}`;

/** `file:line:column` of needle on the first line that holds lineNeedle. */
function atOn(file: string, text: string, lineNeedle: string, needle: string): string {
  const line = lineOf(text, lineNeedle);
  return `${file}:${line}:${text.split('\n')[line - 1].indexOf(needle) + 1}`;
}

/** SMALL_RECIPE with a second source, lakes (site, area, x2), inserted after the first. */
const TWO_SOURCES = SMALL_RECIPE.replace(
  'target: y',
  '  lakes:\n    file: data/lakes.csv\n    columns: {site: string, area: number, x2: number}\ntarget: y',
);
const LAKES = { 'data/lakes.csv': 'site,area,x2\nS0,1,2\n' };

afterEach(() => vi.restoreAllMocks());

describe('recipe syntax', () => {
  it('reports a tab used as indentation at its line, in the YAML parser’s words', () => {
    const text = SMALL_RECIPE.replace('seed: 3\n', 'seed: 3\n\tbad: 1\n');
    const { file, problems } = problemsOf(text);
    // the detail is the yaml package's (eemeli/yaml) own error text for a tab indent
    expect(problems).toEqual([`${file}:${lineOf(text, '\tbad')}:1: ${messages.yamlSyntax('Tabs are not allowed as indentation')}`]);
  });

  it('refuses a file whose aliases expand too far, at its start', () => {
    const text = SMALL_RECIPE + 'x0: &a [1]\nx1: [' + Array(60).fill('*a').join(', ') + ']\n';
    const { file, problems } = problemsOf(text);
    // yaml's toJS({maxAliasCount}) error text
    expect(problems).toEqual([`${file}:1:1: ${messages.yamlSyntax('Excessive alias count indicates a resource exhaustion attack')}`]);
  });
});

describe('recipe schema', () => {
  it('names a missing required key of the recipe at its start', () => {
    const text = SMALL_RECIPE.replace('models:\n  linear: {kind: linear}\n  mean: {kind: mean}\n', '');
    const { file, problems } = problemsOf(text);
    expect(problems).toEqual([`${file}:1:1: ${messages.missingKey('models', 'the recipe')}`]);
  });

  it('names a missing required key of a nested mapping at that mapping', () => {
    const text = SMALL_RECIPE + 'clean:\n  - within: {min: 0}\n';
    const { file, problems } = problemsOf(text);
    expect(problems).toEqual([`${at(file, text, '{min: 0}')}: ${messages.missingKey('column', 'clean[0].within')}`]);
  });

  it('gives the bound a number breaks: minimum, exclusive maximum and a list too short', () => {
    const seed = SMALL_RECIPE.replace('seed: 3', 'seed: -1');
    const a = problemsOf(seed);
    expect(a.problems).toEqual([`${at(a.file, seed, '-1')}: ${messages.outOfRange('seed', -1, 'at least 0')}`]);

    const k = SMALL_RECIPE.replace('folds: {k: 3}', 'folds: {k: 1}');
    const b = problemsOf(k);
    expect(b.problems).toEqual([`${atOn(b.file, k, 'folds:', '1}')}: ${messages.outOfRange('evaluation.folds.k', 1, 'at least 2')}`]);

    const fraction = SMALL_RECIPE.replace('folds: {k: 3}', 'holdout: {fraction: 1}');
    const c = problemsOf(fraction);
    expect(c.problems).toEqual([
      `${atOn(c.file, fraction, 'holdout:', '1}')}: ${messages.outOfRange('evaluation.holdout.fraction', 1, 'less than 1')}`,
    ]);

    // prediction_interval is a mapping with a level, or false
    const level = SMALL_RECIPE.replace('folds: {k: 3}', 'prediction_interval: {level: 1}');
    const e = problemsOf(level);
    expect(e.problems).toEqual([`${atOn(e.file, level, 'prediction_interval:', '1}')}: ${messages.outOfRange('evaluation.prediction_interval.level', 1, 'less than 1')}`]);
    const word = SMALL_RECIPE.replace('folds: {k: 3}', 'prediction_interval: yes');
    const f = problemsOf(word);
    expect(f.problems).toEqual([`${atOn(f.file, word, 'prediction_interval:', 'yes')}: ${messages.wrongType('evaluation.prediction_interval', 'a mapping of keys to values or false', 'yes')}`]);
    // a mapping with a misspelt key is told about the key, not that it should have been false
    const key = SMALL_RECIPE.replace('folds: {k: 3}', 'prediction_interval: {lvl: 0.8}');
    const g = problemsOf(key);
    expect(g.problems).toEqual([`${atOn(g.file, key, 'prediction_interval:', 'lvl')}: ${messages.unknownKey('lvl', 'evaluation.prediction_interval', 'level', ['level'])}`]);

    const empty = SMALL_RECIPE.replace('predictors: [x1, x2]', 'predictors: []');
    const d = problemsOf(empty);
    expect(d.problems).toEqual([`${at(d.file, empty, '[]')}: ${messages.outOfRange('predictors', [], 'a list of at least 1 item(s)')}`]);
  });

  it('explains the pattern a name and a pinned hash must follow', () => {
    const name = SMALL_RECIPE.replace('name: small', 'name: Small');
    const a = problemsOf(name);
    // the rules are written in runner/validate.ts (patternRule), not in the catalogue
    expect(a.problems).toEqual([`${at(a.file, name, 'Small')}: ${messages.badSlug('name', 'Small')}`]);

    const pin = SMALL_RECIPE.replace('    columns: {site', '    sha256: abc\n    columns: {site');
    const b = problemsOf(pin);
    expect(b.problems).toEqual([
      `${at(b.file, pin, 'abc')}: ${messages.badSha256('sources.obs.sha256', 'abc')}`,
    ]);
  });

  // the predicates below are written in runner/validate.ts (describeError), not in the catalogue
  it('says a list repeats a value', () => {
    const text = SMALL_RECIPE.replace('predictors: [x1, x2]', 'predictors: [x1, x1]');
    const { file, problems } = problemsOf(text);
    expect(problems).toEqual([`${at(file, text, '[x1, x1]')}: ${messages.listRepeats('predictors')}`]);
  });

  it('says a mapping that needs entries is empty', () => {
    const text = SMALL_RECIPE.replace('columns: {site: string, x1: number, x2: number, y: number}', 'columns: {}');
    const { file, problems } = problemsOf(text);
    expect(problems).toEqual([`${at(file, text, '{}')}: ${messages.emptyMapping('sources.obs.columns')}`]);
  });

  it('says a list item holds two steps', () => {
    const text = SMALL_RECIPE + 'clean:\n  - {drop_missing: [x1], keep_rows: "d.x1 > 0"}\n';
    const { file, problems } = problemsOf(text);
    expect(problems).toEqual([
      `${at(file, text, '{drop_missing')}: ${messages.oneStepPerItem('clean[0]')}`,
    ]);
  });

  it('says a text value is empty, or too long', () => {
    const empty = SMALL_RECIPE.replace('target: y', 'target: ""');
    const a = problemsOf(empty);
    expect(a.problems).toEqual([`${at(a.file, empty, '""')}: ${messages.emptyText('target')}`]);

    const title = 'x'.repeat(301);
    const long = SMALL_RECIPE.replace('seed: 3', `seed: 3\ntitle: ${title}`);
    const b = problemsOf(long);
    expect(b.problems).toEqual([`${at(b.file, long, title)}: ${messages.textTooLong('title', 300)}`]);
  });

  it('says a derived column’s name is not a plain identifier', () => {
    const text = SMALL_RECIPE + 'features:\n  - derive: {"2x": "d.x1 * 2"}\n';
    const { file, problems } = problemsOf(text);
    expect(problems).toEqual([`${at(file, text, '"2x"')}: ${messages.badName('2x', 'features[0].derive', false)}`]);
  });
});

describe('recipe meaning and files', () => {
  it('names a missing source file, where the recipe gives it, and where it looked', () => {
    const text = SMALL_RECIPE.replace('data/obs.csv', 'data/missing.csv');
    const dir = makeFolder({ 'recipe.yaml': text, 'data/obs.csv': smallData() });
    const path = join(dir, 'recipe.yaml');
    const error = (() => {
      try {
        loadRecipe(path, { checkFiles: true });
      } catch (e) {
        return e as RecipeErrors;
      }
      throw new Error('expected the recipe to be refused');
    })();
    expect(error).toBeInstanceOf(RecipeErrors);
    expect(error.exitCode).toBe(2);
    expect(error.problems).toEqual([
      `${at(displayOf(path), text, 'data/missing.csv')}: ${messages.sourceFileMissing('data/missing.csv', displayOf(join(dir, 'data/missing.csv')))}`,
    ]);
  });

  it('stops when a pinned source file has another SHA-256, at the pin', () => {
    const pinned = 'a'.repeat(64);
    const text = SMALL_RECIPE.replace('    columns: {site', `    sha256: ${pinned}\n    columns: {site`);
    const { file, problems } = problemsOf(text);
    // the file's hash computed here with node:crypto, not with dendrolog's own helper
    const actual = createHash('sha256').update(smallData()).digest('hex');
    expect(problems).toEqual([`${at(file, text, pinned)}: ${messages.sourceHashMismatch('data/obs.csv', pinned, actual)}`]);
  });

  it('names an unknown source in a join, with a suggestion or with the sources there are', () => {
    const near = TWO_SOURCES + 'join:\n  - {with: lake, on: site}\n';
    const a = problemsOf(near, LAKES);
    expect(a.problems).toEqual([`${at(a.file, near, 'lake, on')}: ${messages.unknownSource('lake', ['obs', 'lakes'], 'lakes')}`]);

    const far = TWO_SOURCES + 'join:\n  - {with: rivers, on: site}\n';
    const b = problemsOf(far, LAKES);
    expect(b.problems).toEqual([`${at(b.file, far, 'rivers')}: ${messages.unknownSource('rivers', ['obs', 'lakes'])}`]);
  });

  it('refuses a join that would bring in a column the table already has', () => {
    const text = TWO_SOURCES + 'join:\n  - {with: lakes, on: site}\n';
    const { file, problems } = problemsOf(text, LAKES);
    expect(problems).toEqual([`${at(file, text, '{with: lakes')}: ${messages.duplicateColumn('x2', 'join[0] with lakes')}`]);
  });

  it('refuses a derived column that already exists', () => {
    const text = SMALL_RECIPE + 'features:\n  - derive: {x1: "d.x2 * 2"}\n';
    const { file, problems } = problemsOf(text);
    expect(problems).toEqual([`${at(file, text, '"d.x2 * 2"')}: ${messages.duplicateColumn('x1', 'features[0] (derive)')}`]);
  });

  it('refuses the target as a predictor, at its place in the list', () => {
    const text = SMALL_RECIPE.replace('predictors: [x1, x2]', 'predictors: [x1, y]');
    const { file, problems } = problemsOf(text);
    expect(problems).toEqual([`${atOn(file, text, 'predictors:', 'y]')}: ${messages.predictorIsTarget('y')}`]);
  });

  it('refuses a target that is not a number column', () => {
    const text = SMALL_RECIPE.replace('target: y', 'target: site').replace('groups: site', 'groups: y');
    const { file, problems } = problemsOf(text);
    expect(problems).toEqual([`${atOn(file, text, 'target:', 'site')}: ${messages.targetNotNumber('site', 'string')}`]);
  });

  it('asks for groups when the holdout or the folds split by groups without them', () => {
    const text = SMALL_RECIPE.replace('groups: site\n', '').replace('folds: {k: 3}', 'holdout: {by: groups}\n  folds: {k: 3, by: groups}');
    const { file, problems } = problemsOf(text);
    expect(problems).toEqual([
      `${atOn(file, text, 'holdout:', 'groups}')}: ${messages.groupsNeeded('evaluation.holdout')}`,
      `${atOn(file, text, 'folds:', 'groups}')}: ${messages.groupsNeeded('evaluation.folds')}`,
    ]);
  });

  it('refuses a row_key column the table does not have', () => {
    const text = SMALL_RECIPE.replace('groups: site', 'groups: site\nrow_key: [site, day]');
    const { file, problems } = problemsOf(text);
    expect(problems).toEqual([`${atOn(file, text, 'row_key:', 'day')}: ${messages.unknownColumn('day', 'row_key', ['site', 'x1', 'x2', 'y'], 'y')}`]);
  });

  it('refuses block coordinates that are not declared number columns', () => {
    const text = SMALL_RECIPE.replace('groups: site', 'groups: site\nblocks: {x: site, y: x3, size: 5}');
    const { file, problems } = problemsOf(text);
    expect(problems).toEqual([
      `${atOn(file, text, 'blocks:', 'site')}: ${messages.blockCoordinateNotNumber('site', 'string')}`,
      `${atOn(file, text, 'blocks:', 'x3')}: ${messages.unknownColumn('x3', 'blocks.y', ['site', 'x1', 'x2', 'y'], 'x1')}`,
    ]);
    const size = SMALL_RECIPE.replace('groups: site', 'groups: site\nblocks: {x: x1, y: x2, size: 0}');
    const z = problemsOf(size);
    expect(z.problems).toEqual([`${atOn(z.file, size, 'blocks:', '0}')}: ${messages.outOfRange('blocks.size', 0, 'greater than 0')}`]);
  });

  it.each([
    ['a time column', 'time', messages.timeNeeded],
    ['blocks', 'blocks', messages.blocksNeeded],
  ] as const)('asks for %s when the holdout or the folds split by %s without it', (_, by, needed) => {
    const text = SMALL_RECIPE.replace('folds: {k: 3}', `holdout: {by: ${by}}\n  folds: {k: 3, by: ${by}}`);
    const { file, problems } = problemsOf(text);
    expect(problems).toEqual([
      `${atOn(file, text, 'holdout:', `${by}}`)}: ${needed('evaluation.holdout')}`,
      `${atOn(file, text, 'folds:', `${by}}`)}: ${needed('evaluation.folds')}`,
    ]);
  });
});

describe('command line: a missing argument', () => {
  async function usage(argv: string[]): Promise<{ code: number; err: string }> {
    const err: string[] = [];
    vi.spyOn(process.stdout, 'write').mockImplementation(() => true);
    vi.spyOn(process.stderr, 'write').mockImplementation((s) => (err.push(String(s)), true));
    const code = await main(argv);
    vi.restoreAllMocks();
    return { code, err: err.join('') };
  }

  it.each([
    [['run'], 'a recipe file', 'run'],
    [['check'], 'a recipe file', 'check'],
    [['verify'], 'a run folder', 'verify'],
    [['compare', 'out/a'], 'two run folders, the old then the new', 'compare'],
    [['predict', 'out/a'], 'a run folder and a data file', 'predict'],
    [['predict', 'out/a', 'new.csv'], '--out PREDICTIONS.csv', 'predict'],
  ])('%j exits 2 saying what is missing', async (argv, what, command) => {
    expect(await usage(argv)).toEqual({ code: 2, err: messages.usageMissingArgument(what, command) + '\n' });
  });
});

describe('run folders: verify, compare and predict', () => {
  let runDir = '';
  let outName = '';

  beforeAll(async () => {
    runDir = makeFolder({ 'recipe.yaml': SMALL_RECIPE, 'data/obs.csv': smallData() });
    const { outDir } = await runRecipe(join(runDir, 'recipe.yaml'), { cache: join(makeFolder({}), 'cache'), workers: 1, progress: silentProgress() });
    outName = outDir.slice(runDir.length + 1);
  });

  /** A copy of the finished run's folder (recipe, data and outputs); returns it and its run folder. */
  function copyOfRun(): { dir: string; out: string } {
    const dir = makeFolder({});
    cpSync(runDir, dir, { recursive: true });
    return { dir, out: join(dir, outName) };
  }


  const verify = (out: string) => verifyRun(out, { workers: 1, progress: silentProgress() });

  it('refuses a manifest that is not JSON, with the parser’s complaint', async () => {
    const { out } = copyOfRun();
    const text = '{"dendrolog": 1,';
    writeFileSync(join(out, 'run-record.json'), text);
    // the detail is what the JSON parser itself says about the text
    const detail = (() => {
      try {
        JSON.parse(text);
      } catch (e) {
        return (e as Error).message;
      }
      throw new Error('expected the text not to parse');
    })();
    const want = messages.manifestUnreadable(displayOf(join(out, 'run-record.json')), detail);
    expect(() => readManifest(out)).toThrow(new DendrologError(want, 2));
    const e = await errorOf(() => verify(out));
    expect([e.message, e.exitCode]).toEqual([want, 2]);
  });

  it('refuses a manifest that does not match its schema, naming the first problems', async () => {
    const { out } = copyOfRun();
    writeFileSync(join(out, 'run-record.json'), '[]\n');
    // schemas/run-record.v1.json: the manifest is an object; ajv's wording for a type error at the root
    const want = messages.manifestUnreadable(displayOf(join(out, 'run-record.json')), '/ must be object');
    const e = await errorOf(async () => readManifest(out));
    expect([e.message, e.exitCode]).toEqual([want, 2]);
  });

  it('compare exits 2 on an unreadable manifest', async () => {
    const { out } = copyOfRun();
    writeFileSync(join(out, 'run-record.json'), '[]\n');
    const err: string[] = [];
    vi.spyOn(process.stdout, 'write').mockImplementation(() => true);
    vi.spyOn(process.stderr, 'write').mockImplementation((s) => (err.push(String(s)), true));
    const code = await main(['compare', join(runDir, outName), out]);
    vi.restoreAllMocks();
    expect(code).toBe(2);
    expect(err.join('')).toBe(messages.manifestUnreadable(displayOf(join(out, 'run-record.json')), '/ must be object') + '\n');
  });

  it('verify stops when the run’s recipe is gone', async () => {
    const { dir, out } = copyOfRun();
    rmSync(join(dir, 'recipe.yaml'));
    const e = await errorOf(() => verify(out));
    expect([e.message, e.exitCode]).toEqual([messages.recipeOfRunMissing(displayOf(join(dir, 'recipe.yaml'))), 1]);
  });

  it('verify stops when a source file of the run is gone', async () => {
    const { dir, out } = copyOfRun();
    rmSync(join(dir, 'data/obs.csv'));
    const e = await errorOf(() => verify(out));
    expect([e.message, e.exitCode]).toEqual([messages.sourceOfRunMissing(displayOf(join(dir, 'data/obs.csv'))), 1]);
  });

  it('predict stops when the run folder has no model.dendro', async () => {
    const { dir, out } = copyOfRun();
    rmSync(join(out, 'model.dendro'));
    const e = await errorOf(() => predictRun(out, join(dir, 'data/obs.csv'), join(dir, 'p.csv')));
    expect([e.message, e.exitCode]).toEqual([messages.modelFileMissing(displayOf(out), 'model.dendro'), 2]);
  });
});

describe('a run that fails on its data', () => {
  it('stops naming a predictor with a missing value that nothing drops or fills (exit 1)', async () => {
    const data = smallData().replace(/\nS1,([^,]*),/, '\nS1,,');
    const dir = makeFolder({ 'recipe.yaml': SMALL_RECIPE, 'data/obs.csv': data });
    let error: unknown;
    try {
      await runRecipe(join(dir, 'recipe.yaml'), { cache: join(dir, '.cache'), workers: 1, progress: silentProgress() });
    } catch (e) {
      error = e;
    }
    expect(error).toEqual(new DendrologError(messages.missingInPredictor('x1', 1), 1));
    expect((error as DendrologError).exitCode).toBe(1);
  });
});
