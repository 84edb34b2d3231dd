import { closeSync, existsSync, openSync, readFileSync, readSync, statSync } from 'node:fs';
import { dirname, join, resolve } from 'node:path';
import type { Column, Frame } from '../core/frame.js';
import { column, isMissing } from '../core/frame.js';
import { sha256 } from '../core/hash.js';
import { DendrologError, messages } from '../core/messages.js';
import { readRunModel } from './model-file.js';
import { cleanLocator, sourceParams } from './plan.js';
import { StrictTextStream, applyDesign, expressionLocator, modelKinds, readDefaults, readHeaderLine, recipeContract, referencedColumns, stepRegistry } from '../steps/index.js';
import { resolveSourcePath } from './recipe.js';
import { displayOf } from './paths.js';
import type { Recipe } from '../core/recipe-types.js';
import { readManifest } from './run-folder.js';
import { checkPredictionsTarget, replaceFile } from './predictions-file.js';
import { makeContext, type FrameOutput, type StepContext } from '../core/step-types.js';
import { WarningLog } from '../core/warnings.js';
import { dict, has } from '../core/dict.js';
import { recipeFromManifest } from './stored-recipe.js';

/** Hidden column that follows each input row through cleaning, so every row can be accounted for. */
const ROW = '__dendrolog_row';

export interface PredictionSummary {
  rows: number;
  predicted: number;
  notPredicted: number;
  outsideRange: number;
  skippedSteps: string[];
  out: string;
}

/**
 * Applies a run's cleaning, features (with the values learned in training) and headline model to a
 * new file shaped like the recipe's main source, and writes one line per input row, in input order:
 * the row's declared columns, the prediction, the predictors outside the training range, and, for a
 * row that cleaning or a missing predictor removed, the reason instead of a prediction. Cleaning
 * steps that need the target run only when the file has the target's columns.
 *
 * Example: `await predictRun('recipes/lake-chlorophyll/out/lake-chlorophyll', 'new.csv', 'pred.csv')`
 */
export async function predictRun(folder: string, dataFile: string, outFile: string): Promise<PredictionSummary> {
  const outDir = resolve(folder);
  const manifest = readManifest(outDir);
  // only the model this run wrote: a truncated, edited or foreign model.bin is refused by name
  const loaded = readRunModel(outDir, manifest);
  if ('problem' in loaded) throw new DendrologError(loaded.problem.message, loaded.problem.exitCode);
  const { model } = loaded;
  const recipe = recipeFromManifest(manifest, displayOf(join(outDir, 'manifest.json')));
  const recipeDir = dirname(resolve(outDir, manifest.recipe.file));
  const dataPath = resolve(dataFile);
  if (!existsSync(dataPath)) throw new DendrologError(messages.dataFileMissing(dataFile), 2);
  if (!statSync(dataPath).isFile()) throw new DendrologError(messages.dataFileNotAFile(dataFile), 2);
  checkPredictionsTarget(outFile, {
    folder: outDir,
    data: dataPath,
    runInputs: [resolve(outDir, manifest.recipe.file), ...Object.values(recipe.sources).map((s) => resolve(recipeDir, s.file))],
  });

  const mainName = Object.keys(recipe.sources)[0];
  const main = recipe.sources[mainName];
  // the target, and the raw columns it is derived from, may be absent from new data
  const targetInputs = new Set([recipe.target]);
  for (const f of recipe.features) if (f.kind === 'derive' && f.columns[recipe.target]) referencedColumns(f.columns[recipe.target]).forEach((c) => targetInputs.add(c));
  const warnings = new WarningLog();
  const ctx = (locator: Record<string, string>): StepContext =>
    makeContext({ key: 'predict', seed: recipe.seed, seedKey: 'predict', locator }, { warn: (code, message) => warnings.add(code, message), workers: 1 });
  // only delimited text has a header to look at first; other formats must carry every declared column
  const header =
    (main.format === 'csv' || main.format === 'tsv') && main.header !== false
      ? readHeader(dataPath, main.delimiter ?? readDefaults(main.format).delimiter!, main.encoding ?? readDefaults(main.format).encoding!)
      : Object.keys(main.columns);
  const absentTarget = [...targetInputs].filter((c) => has(main.columns, c) && !header.includes(c));
  // a declared column nothing in the recipe uses may be absent too; it is filled as missing
  const used = usedColumns(recipe);
  const absentUnused = Object.keys(main.columns).filter((c) => !used.has(c) && !targetInputs.has(c) && !header.includes(c));
  const absent = [...absentTarget, ...absentUnused];
  const spec = { ...main, columns: dict(Object.entries(main.columns).filter(([c]) => !absent.includes(c))) };
  const read = (await stepRegistry.source.run([], sourceParams(spec, sha256(readFileSync(dataPath))) as never, ctx({ path: dataPath, display: displayOf(dataPath) }))) as FrameOutput;
  const input = read.frame;
  for (const c of absent) {
    input.columns.push({ name: c, type: main.columns[c], values: main.columns[c] === 'number' || main.columns[c] === 'date' ? new Float64Array(input.rows).fill(NaN) : new Array(input.rows).fill(null) } as Column);
  }
  let frame: Frame = { rows: input.rows, columns: [...input.columns, { name: ROW, type: 'number', values: Float64Array.from({ length: input.rows }, (_, i) => i) }] };

  const reason = new Array<string | null>(input.rows).fill(null);
  const markGone = (before: Frame, after: Frame, why: (k: number) => string) => {
    const kept = new Set(column(after, ROW).values as Float64Array);
    (column(before, ROW).values as Float64Array).forEach((r, k) => {
      if (!kept.has(r) && reason[r] === null) reason[r] = why(k);
    });
  };
  for (const [i, j] of recipe.join.entries()) {
    const other = recipe.sources[j.with];
    const r = resolveSourcePath({ dir: recipeDir }, other.file);
    if ('problem' in r) throw new DendrologError(r.problem, 1);
    const right = (await stepRegistry.source.run([], sourceParams(other, sha256(readFileSync(r.path))) as never, ctx({ path: r.path, display: displayOf(r.path) }))) as FrameOutput;
    const joined = (await stepRegistry.join.run([{ frame, notes: read.notes }, right], j as never, ctx({}))) as FrameOutput;
    markGone(frame, joined.frame, () => `no partner in source "${j.with}" (join[${i}] on ${j.on.join(', ')})`);
    frame = joined.frame;
  }
  const skippedSteps: string[] = [];
  // the run's recipe as kept in its manifest has no positions; expression messages name the file
  const recipeWhere = displayOf(resolve(outDir, manifest.recipe.file));
  const targetAbsent = absentTarget.length > 0;
  for (const [i, step] of recipe.clean.entries()) {
    const { kind, ...stepParams } = step;
    const contract = recipeContract('clean', kind)!;
    const params = targetAbsent ? contract.without(stepParams, targetInputs) : stepParams;
    if (params === null) {
      skippedSteps.push(`clean[${i}] ${kind}`);
      continue;
    }
    const locator = cleanLocator({ kind, ...(params as Record<string, unknown>) }, i, () => recipeWhere);
    const out = (await stepRegistry[kind].run([{ frame, notes: read.notes }], params as never, ctx(locator))) as FrameOutput;
    const before = frame;
    markGone(before, out.frame, (k) => `removed by clean[${i}] ${kind}: ${contract.rowReason(params, before, k)}`);
    frame = out.frame;
  }
  for (const [i, f] of recipe.features.entries()) {
    if (f.kind !== 'derive') continue;
    const columns = dict(Object.entries(f.columns).filter(([name]) => !(targetAbsent && name === recipe.target)));
    if (Object.keys(columns).length === 0) continue;
    const locator = expressionLocator(`features[${i}] derive`, Object.keys(columns).map((name): [string, string] => [name, recipeWhere]));
    frame = ((await stepRegistry.derive.run([{ frame, notes: read.notes }], { columns } as never, ctx(locator))) as FrameOutput).frame;
  }

  // rows with a missing predictor that no impute step fills cannot be predicted; say so per row
  const rowsOf = column(frame, ROW).values as Float64Array;
  const usable: number[] = [];
  for (let k = 0; k < frame.rows; k++) {
    const missing = model.design.predictors.filter((p) => isMissing(column(frame, p), k) && !has(model.design.impute, p));
    if (missing.length) reason[rowsOf[k]] = `missing ${missing.join(', ')}`;
    else usable.push(k);
  }
  const predictions = new Array<number | null>(input.rows).fill(null);
  const outside = new Array<string>(input.rows).fill('');
  if (usable.length) {
    const p = await modelKinds[model.kind].predict(model.bytes, applyDesign(model.design, frame, usable));
    usable.forEach((k, j) => {
      const r = rowsOf[k];
      predictions[r] = p[j];
      outside[r] = Object.entries(model.ranges)
        .filter(([name, range]) => {
          const v = (column(frame, name).values as Float64Array)[k];
          return v < range.min || v > range.max;
        })
        .map(([name]) => name)
        .join(' ');
    });
  }

  const declared = input.columns.filter((c) => !absent.includes(c.name));
  const lines = [[...declared.map((c) => c.name), 'input_row', `predicted_${recipe.target}`, 'outside_training_range', 'not_predicted_because'].map(csvField).join(',')];
  for (let r = 0; r < input.rows; r++) {
    const fields = declared.map((c) => formatValue(c, r));
    fields.push(String(r + 1), predictions[r] === null ? '' : String(predictions[r]), outside[r], predictions[r] === null ? (reason[r] ?? 'not predicted') : '');
    lines.push(fields.map(csvField).join(','));
  }
  replaceFile(outFile, lines.join('\n') + '\n');
  return {
    rows: input.rows,
    predicted: predictions.filter((p) => p !== null).length,
    notPredicted: predictions.filter((p) => p === null).length,
    outsideRange: outside.filter((o) => o !== '').length,
    skippedSteps,
    out: outFile,
  };
}

/** Every column the recipe's joins, cleaning, features and predictors refer to. */
function usedColumns(recipe: Recipe): Set<string> {
  const used = new Set<string>(recipe.predictors);
  for (const j of recipe.join) j.on.forEach((c) => used.add(c));
  for (const { kind, ...params } of recipe.clean) for (const r of recipeContract('clean', kind)?.reads(params) ?? []) used.add(r.column);
  for (const f of recipe.features) {
    if (f.kind === 'derive') Object.values(f.columns).forEach((e) => referencedColumns(e).forEach((x) => used.add(x)));
    else if (f.kind === 'one_hot') used.add(f.column);
    else f.columns.forEach((x) => used.add(x));
  }
  return used;
}

/**
 * The header row of delimited text, read from the first 64 KiB only (the CSV reader's own parser),
 * decoded as the source step decodes the whole file (a character cut at 64 KiB waits, unreported).
 */
function readHeader(path: string, delimiter: string, encoding: string): string[] {
  const fd = openSync(path, 'r');
  try {
    const head = Buffer.alloc(65536);
    const n = readSync(fd, head, 0, head.length, 0);
    const text = new StrictTextStream(encoding, displayOf(path)).push(head.subarray(0, n));
    const end = text.search(/\r?\n/);
    return readHeaderLine(end < 0 ? text : text.slice(0, end), delimiter, displayOf(path));
  } finally {
    closeSync(fd);
  }
}

function formatValue(c: Column, r: number): string {
  const v = c.values[r];
  if (v === null || (typeof v === 'number' && Number.isNaN(v))) return '';
  if (c.type === 'date') return new Date(v as number).toISOString().slice(0, 10);
  return String(v);
}

function csvField(s: string): string {
  return /[",\n\r]/.test(s) ? `"${s.replace(/"/g, '""')}"` : s;
}
