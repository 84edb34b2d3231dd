import { existsSync, lstatSync, readdirSync, readFileSync, realpathSync, statSync } from 'node:fs';
import { dirname, isAbsolute, resolve } from 'node:path';
import { displayOf, isInside } from './paths.js';
import { sha256 } from '../core/hash.js';
import { DendrologError, messages, RecipeErrors } from '../core/messages.js';
import { normalizeRecipe } from './normalize.js';
import type { ColumnType, Recipe, SourceSpec } from '../core/recipe-types.js';
import { closest } from '../core/suggest.js';
import { validateRecipe } from './validate.js';
import { COMMON_ENCODINGS, decodeStrict, encodingName, expressionProblem, parseValue, recipeSteps, referencedColumns } from '../steps/index.js';
import { readYaml, type PositionedDocument } from './yaml-read.js';
import { has } from '../core/dict.js';
import { ARQUERO_UNSAFE_NAMES } from '../core/frame.js';

/** A recipe describes an analysis; anything larger is data in the wrong place, or an attack on the parser. */
export const MAX_RECIPE_BYTES = 1 << 20;

/** Where a recipe came from: its file, folder, bytes' hash and a locator for its positions. */
export interface RecipeOrigin {
  /** Absolute path of the recipe file. */
  path: string;
  /** Absolute path of the folder holding it; source paths are relative to this. */
  dir: string;
  /** The path as shown in messages. */
  displayPath: string;
  sha256: string;
  text: string;
  doc: PositionedDocument;
}

export interface LoadedRecipe {
  recipe: Recipe;
  origin: RecipeOrigin;
}

/**
 * Reads, validates and normalizes a recipe; throws RecipeErrors listing every problem with file:line:column.
 * With `checkFiles`, also checks that each source file exists inside the recipe's folder (and its pin).
 *
 * Example: `loadRecipe('recipes/lake-chlorophyll/lake-chlorophyll.yaml').recipe.seed === 7`
 */
export function loadRecipe(path: string, opts: { checkFiles?: boolean } = {}): LoadedRecipe {
  const abs = resolve(path);
  if (existsSync(abs) && statSync(abs).isDirectory()) {
    const yamls = readdirSync(abs).filter((f) => /\.ya?ml$/i.test(f)).sort();
    throw new DendrologError(messages.recipeIsFolder(path, yamls), 2);
  }
  if (!existsSync(abs) || !statSync(abs).isFile()) throw new DendrologError(messages.recipeFileMissing(path), 2);
  const displayPath = displayOf(abs);
  const size = statSync(abs).size;
  if (size > MAX_RECIPE_BYTES) throw new DendrologError(messages.recipeTooLarge(displayPath, size, MAX_RECIPE_BYTES), 2);
  const bytes = readFileSync(abs);
  // strict, so a stray Latin-1 byte is named rather than turned into U+FFFD; a UTF-8 byte order mark
  // (as some Windows editors write) is accepted and dropped by the decoder, and still in the hash
  const text = decodeStrict(bytes, 'utf-8', displayPath, (at) => new DendrologError(messages.recipeNotUtf8(displayPath, at.line, at.offset, at.byte), 2));
  const { doc, problems } = readYaml(text, displayPath);
  if (!doc) throw new RecipeErrors(problems);
  const schemaProblems = validateRecipe(doc);
  if (schemaProblems.length > 0) throw new RecipeErrors(schemaProblems);
  const recipe = normalizeRecipe(doc.value as Record<string, unknown>);
  const origin: RecipeOrigin = { path: abs, dir: dirname(abs), displayPath, sha256: sha256(bytes), text, doc };
  const meaning = checkMeaning(recipe, doc);
  if (opts.checkFiles) meaning.push(...checkFiles(recipe, origin));
  meaning.push(...checkReportFolder(recipe.report.folder, origin, opts.checkFiles === true));
  if (meaning.length > 0) throw new RecipeErrors(meaning);
  return { recipe, origin };
}

/**
 * Reads, validates, normalizes and checks recipe text that is not a file of its own (the recipe a
 * run record keeps); throws RecipeErrors with positions in that text.
 */
export function recipeFromText(text: string, displayPath: string): { recipe: Recipe; doc: PositionedDocument } {
  const { doc, problems } = readYaml(text, displayPath);
  if (!doc) throw new RecipeErrors(problems);
  const schemaProblems = validateRecipe(doc);
  if (schemaProblems.length > 0) throw new RecipeErrors(schemaProblems);
  const recipe = normalizeRecipe(doc.value as Record<string, unknown>);
  const meaning = checkMeaning(recipe, doc);
  if (meaning.length > 0) throw new RecipeErrors(meaning);
  return { recipe, doc };
}

export { displayOf };

/**
 * Resolves a source path against the recipe's folder, refusing paths that leave it (also through links).
 * Returns the absolute path, or a problem message.
 */
export function resolveSourcePath(origin: Pick<RecipeOrigin, 'dir'>, file: string): { path: string } | { problem: string } {
  const abs = resolve(origin.dir, file);
  if (!isInside(origin.dir, abs)) return { problem: messages.sourcePathEscapes(file) };
  if (!existsSync(abs)) return { problem: messages.sourceFileMissing(file, displayOf(abs)) };
  if (!isInside(realpathSync(origin.dir), realpathSync(abs))) return { problem: messages.sourcePathEscapes(file) };
  // a folder (or a device, a pipe) would fail deep in a reader, or block it, instead of here
  const st = statSync(abs);
  if (!st.isFile()) return { problem: messages.sourceNotAFile(file, displayOf(abs), st.isDirectory()) };
  return { path: abs };
}

/**
 * report.folder must stay inside the recipe's folder, as source paths do, so that a recipe cannot
 * make a run write elsewhere; --out is the explicit way to do that. With `onDisk`, the part of the
 * path that exists is also followed through links.
 */
function checkReportFolder(folder: string, origin: RecipeOrigin, onDisk: boolean): string[] {
  const problem = [`${origin.doc.where(['report', 'folder'])}: ${messages.reportFolderEscapes(folder)}`];
  const abs = resolve(origin.dir, folder);
  if (isAbsolute(folder) || !isInside(origin.dir, abs, true)) return problem;
  if (!onDisk) return [];
  // the part that exists decides where the run folder would land; the recipe's folder exists
  let existing = abs;
  const present = (p: string) => {
    try {
      return lstatSync(p) !== undefined;
    } catch {
      return false;
    }
  };
  while (!present(existing)) existing = dirname(existing);
  try {
    return isInside(realpathSync(origin.dir), realpathSync(existing), true) ? [] : problem;
  } catch {
    // a link to nowhere: where the run would write cannot be told
    return problem;
  }
}

function checkFiles(recipe: Recipe, origin: RecipeOrigin): string[] {
  const problems: string[] = [];
  for (const [name, s] of Object.entries(recipe.sources)) {
    const r = resolveSourcePath(origin, s.file);
    if ('problem' in r) {
      problems.push(`${origin.doc.where(['sources', name, 'file'])}: ${r.problem}`);
      continue;
    }
    if (s.sha256) {
      const actual = sha256(readFileSync(r.path));
      if (actual !== s.sha256) {
        problems.push(`${origin.doc.where(['sources', name, 'sha256'])}: ${messages.sourceHashMismatch(s.file, s.sha256, actual)}`);
      }
    }
  }
  return problems;
}

const TEXT_OPTIONS = ['delimiter', 'decimal', 'header'];
const NETCDF_OPTIONS = ['variables', 'select'];

/**
 * Checks one source's read options against its format and columns, from the recipe alone: options
 * of another format, a decimal comma with a comma delimiter, NetCDF variables that are not
 * declared, and select bounds of the wrong kind.
 */
function checkSource(s: SourceSpec, name: string, doc: PositionedDocument): string[] {
  const problems: string[] = [];
  const add = (path: (string | number)[], msg: string) => problems.push(`${doc.where(['sources', name, ...path])}: ${msg}`);
  const raw = ((doc.value as Record<string, Record<string, Record<string, unknown>>>).sources?.[name] ?? {}) as Record<string, unknown>;
  const text = s.format === 'csv' || s.format === 'tsv';
  for (const k of TEXT_OPTIONS) if (has(raw, k) && !text) add([k], messages.sourceOptionNotForFormat(k, s.format, 'csv and tsv'));
  for (const k of NETCDF_OPTIONS) if (has(raw, k) && s.format !== 'netcdf') add([k], messages.sourceOptionNotForFormat(k, s.format, 'netcdf'));
  if (has(raw, 'encoding')) {
    if (!text && s.format !== 'json') add(['encoding'], messages.sourceOptionNotForFormat('encoding', s.format, 'csv, tsv and json'));
    else if (typeof raw.encoding === 'string' && !encodingName(raw.encoding)) add(['encoding'], messages.unknownEncoding(raw.encoding, closest(raw.encoding, COMMON_ENCODINGS)));
  }
  if (text && s.decimal === ',' && s.delimiter === ',') {
    add(['decimal'], messages.schemaOther(`sources.${name}.decimal`, 'a decimal comma needs another delimiter; set delimiter: ";" (or a tab)'));
  }
  if (s.format === 'netcdf') {
    if (!s.variables) add([], messages.netcdfVariablesNeeded());
    (s.variables ?? []).forEach((v, i) => {
      if (!has(s.columns, v)) add(['variables', i], messages.netcdfVariableNotDeclared(v));
    });
    for (const [dim, range] of Object.entries(s.select ?? {})) {
      const type = s.columns[dim];
      if (!type) {
        add(['select', dim], messages.unknownColumn(dim, `sources.${name}.select`, Object.keys(s.columns), closest(dim, Object.keys(s.columns))));
        continue;
      }
      range.forEach((b, i) => {
        if (b === null) return;
        if (type === 'date' && (typeof b !== 'string' || parseValue(b, 'date', new Set()) == null)) add(['select', dim, i], messages.netcdfSelectValue(dim, b, 'date (YYYY-MM-DD)'));
        if (type === 'number' && typeof b !== 'number') add(['select', dim, i], messages.netcdfSelectValue(dim, b, 'number'));
      });
    }
  }
  return problems;
}

/**
 * Checks what the schema cannot: names that must exist, expressions that must compile, and
 * column types along the pipeline, all from the recipe alone (no data read).
 */
function checkMeaning(recipe: Recipe, doc: PositionedDocument): string[] {
  const problems: string[] = [];
  const add = (path: (string | number)[], msg: string) => problems.push(`${doc.where(path)}: ${msg}`);
  const sourceNames = Object.keys(recipe.sources);
  const primary = sourceNames[0];
  const cols = new Map<string, ColumnType>(Object.entries(recipe.sources[primary].columns));
  const need = (path: (string | number)[], column: string, step: string): boolean => {
    if (cols.has(column)) return true;
    add(path, messages.unknownColumn(column, step, [...cols.keys()], closest(column, cols.keys())));
    return false;
  };

  for (const name of sourceNames) problems.push(...checkSource(recipe.sources[name], name, doc));
  // a terminal escape or a NUL in the title would reach summary.md and anyone who prints it
  // eslint-disable-next-line no-control-regex -- finding control characters is the point
  const control = /[\u0000-\u0008\u000b-\u001f\u007f]/.exec(recipe.title);
  if (control) add(['title'], messages.controlCharacter('title', control[0].charCodeAt(0)));

  recipe.join.forEach((j, i) => {
    const other = recipe.sources[j.with];
    if (!other) {
      add(['join', i, 'with'], messages.unknownSource(j.with, sourceNames, closest(j.with, sourceNames)));
      return;
    }
    if (j.with === primary) {
      add(['join', i, 'with'], messages.schemaOther(`join[${i}].with`, `"${primary}" is the main table (the first source) and cannot be joined to itself`));
      return;
    }
    for (const key of j.on) {
      need(['join', i, 'on'], key, `join[${i}]`);
      if (!has(other.columns, key)) {
        const known = Object.keys(other.columns);
        add(['join', i, 'on'], messages.unknownColumn(key, `join[${i}] (source ${j.with})`, known, closest(key, known)));
      }
    }
    for (const [c, t] of Object.entries(other.columns)) {
      if (j.on.includes(c)) continue;
      if (cols.has(c)) add(['join', i], messages.duplicateColumn(c, `join[${i}] with ${j.with}`));
      else cols.set(c, t);
    }
  });

  // each kind says through its contract what it reads, evaluates, adds, encodes and requires
  const encoded = new Set<string>();
  const predictors = new Set(recipe.predictors);
  for (const { section, index: i, kind, params, contract, learned } of recipeSteps(recipe)) {
    const label = `${section}[${i}] (${kind})`;
    const base = [section, i, kind];
    const expressions = contract.expressions?.(params) ?? [];
    for (const e of expressions) checkExpression([...base, ...e.at], e.expr, label);
    const inExpressions = new Set(expressions.flatMap((e) => referencedColumns(e.expr)));
    for (const r of contract.reads(params)) {
      if (inExpressions.has(r.column) || !need([...base, ...r.at], r.column, label)) continue;
      // the model table holds only target, predictors, groups and time: a learned step sees predictors only
      if (learned && !predictors.has(r.column)) add([...base, ...r.at], messages.learnedNotPredictor(r.column, label));
    }
    for (const c of contract.check?.(params, cols, label) ?? []) add([...base, ...c.at], c.message);
    const writes = contract.writes?.(params) ?? [];
    for (const w of writes) {
      if (ARQUERO_UNSAFE_NAMES.has(w.column)) add([...base, ...w.at], messages.expressionReservedColumn(w.column, label));
      if (cols.has(w.column)) add([...base, ...w.at], messages.duplicateColumn(w.column, label));
    }
    // added after the step's own checks: no expression of a step may read a sibling it adds
    for (const w of writes) cols.set(w.column, w.type);
    for (const c of contract.encodes?.(params) ?? []) if (cols.has(c)) encoded.add(c);
  }

  if (need(['target'], recipe.target, 'target')) {
    const t = cols.get(recipe.target) as ColumnType;
    if (t !== 'number') add(['target'], messages.targetNotNumber(recipe.target, t));
  }
  recipe.predictors.forEach((p, i) => {
    if (!need(['predictors', i], p, 'predictors')) return;
    if (p === recipe.target) add(['predictors', i], messages.predictorIsTarget(p));
    const t = cols.get(p);
    if ((t === 'string' || t === 'category') && !encoded.has(p)) add(['predictors', i], messages.categoryPredictorNeedsEncoding(p));
  });
  if (recipe.groups) need(['groups'], recipe.groups, 'groups');
  if (recipe.time) need(['time'], recipe.time, 'time');
  recipe.row_key?.forEach((c, i) => need(['row_key', i], c, 'row_key'));
  if (recipe.blocks) {
    for (const axis of ['x', 'y'] as const) {
      const c = recipe.blocks[axis];
      if (need(['blocks', axis], c, `blocks.${axis}`) && cols.get(c) !== 'number') add(['blocks', axis], messages.blockCoordinateNotNumber(c, cols.get(c)!));
    }
  }
  const ev = recipe.evaluation;
  for (const part of ['holdout', 'folds'] as const) {
    if (ev[part].by === 'blocks' && !recipe.blocks) add(['evaluation', part, 'by'], messages.blocksNeeded(`evaluation.${part}`));
  }
  if (ev.holdout.by === 'groups' && !recipe.groups) add(['evaluation', 'holdout', 'by'], messages.groupsNeeded('evaluation.holdout'));
  if (ev.folds.by === 'groups' && !recipe.groups) add(['evaluation', 'folds', 'by'], messages.groupsNeeded('evaluation.folds'));
  for (const part of ['holdout', 'folds'] as const) {
    if (ev[part].by !== 'time') continue;
    if (!recipe.time) add(['evaluation', part, 'by'], messages.timeNeeded(`evaluation.${part}`));
    else if (cols.has(recipe.time) && !['date', 'number'].includes(cols.get(recipe.time)!)) {
      add(['time'], messages.schemaOther('time', `column "${recipe.time}" is ${cols.get(recipe.time)}; a time column must be a date or a number`));
    }
  }
  if (ev.holdout.gap > 0 && ev.holdout.by !== 'time') {
    add(['evaluation', 'holdout', 'gap'], messages.schemaOther('evaluation.holdout.gap', 'only applies with by: time; remove it or set by: time'));
  }
  if (ev.holdout.cutoff !== null) {
    if (ev.holdout.by !== 'time') {
      add(['evaluation', 'holdout', 'cutoff'], messages.schemaOther('evaluation.holdout.cutoff', 'only applies with by: time; remove it or set by: time'));
    } else if (recipe.time && cols.get(recipe.time) === 'date' && parseValue(String(ev.holdout.cutoff), 'date', new Set()) == null) {
      add(['evaluation', 'holdout', 'cutoff'], messages.schemaOther('evaluation.holdout.cutoff', `"${ev.holdout.cutoff}" is not a date; write it as YYYY-MM-DD`));
    } else if (recipe.time && cols.get(recipe.time) === 'number' && typeof ev.holdout.cutoff !== 'number') {
      add(['evaluation', 'holdout', 'cutoff'], messages.schemaOther('evaluation.holdout.cutoff', `must be a number, like the time column "${recipe.time}"`));
    }
  }

  let cells = 0;
  for (const m of Object.values(recipe.models)) cells += Object.values(m.grid).reduce((n, v) => n * v.length, 1);
  if (cells > ev.max_cells) add(['models'], messages.gridTooLarge(cells, ev.max_cells));
  return problems;

  function checkExpression(path: (string | number)[], expr: string, label: string) {
    const problem = expressionProblem(expr);
    if (problem?.kind === 'compile') {
      add(path, messages.expressionCompile(expr, problem.detail));
      return;
    }
    if (problem?.kind === 'whole-table') {
      const { name, family, start, end } = problem.call;
      problems.push(`${doc.whereInValue(path, start, end)}: ${messages.expressionWholeTable(expr, name, family)}`);
    }
    if (problem?.kind === 'not-repeatable') add(path, messages.expressionNotRepeatable(expr, problem.name));
    for (const c of referencedColumns(expr)) {
      if (ARQUERO_UNSAFE_NAMES.has(c)) add(path, messages.expressionReservedColumn(c, label));
      else need(path, c, label);
    }
  }
}
