import { closeSync, existsSync, openSync, readSync, statSync } from 'node:fs';
import { dirname, join, resolve } from 'node:path';
import type { Column } from '../core/frame.js';
import { column, isMissing } from '../core/frame.js';
import { DendrologError, messages } from '../core/messages.js';
import { pickModel, readRunModel } from './model-file.js';
import { cvPlus } from '../models/conformal.js';
import { planApply } from './plan.js';
import { localExecutor } from './execute.js';
import { silentProgress } from './progress.js';
import { ROW_COLUMN, StrictTextStream, TARGET_SCALES, applyDesign, engineFor, readDefaults, readHeaderLine, recipeSteps } from '../steps/index.js';
import { displayOf } from './paths.js';
import type { Recipe } from '../core/recipe-types.js';
import { readManifest, runRecordPath, RUN_FILES } from './run-folder.js';
import { checkPredictionsTarget, replaceFile } from './predictions-file.js';
import type { FrameOutput, Warning } from '../core/step-types.js';
import { has } from '../core/dict.js';
import { recipeFromManifest } from './stored-recipe.js';

export interface PredictionSummary {
  /** The model that predicted: the run's headline model unless another was asked for. */
  model: string;
  /** The model the run chose (its headline). */
  headline: string;
  rows: number;
  predicted: number;
  notPredicted: number;
  outsideRange: number;
  /** The level of the prediction intervals written beside each prediction, or null when the run has none. */
  intervalLevel: number | null;
  skippedSteps: string[];
  /** What the data steps warned about (merged by message, counted). */
  warnings: Warning[];
  out: string;
}

/**
 * Applies a run's cleaning, features (with the values learned in training) and headline model (or
 * another model the run fitted, by name) to a new file shaped like the recipe's main source, and
 * writes one line per input row, in input order: the row's declared columns, the prediction, the predictors outside the training range, and, for a
 * row that cleaning or a missing predictor removed, the reason instead of a prediction. Cleaning
 * steps that need the target run only when the file has the target's columns.
 *
 * Example: `await predictRun('recipes/lake-chlorophyll/out/lake-chlorophyll', 'new.csv', 'pred.csv', { model: 'linear' })`
 */
export async function predictRun(folder: string, dataFile: string, outFile: string, opts: { model?: string } = {}): Promise<PredictionSummary> {
  const outDir = resolve(folder);
  const manifest = readManifest(outDir);
  // only the model this run wrote: a truncated, edited or foreign model file is refused by name
  const loaded = readRunModel(outDir, manifest);
  if ('problem' in loaded) throw new DendrologError(loaded.problem.message, loaded.problem.exitCode);
  const { bundle } = loaded;
  const model = pickModel(bundle, opts.model, displayOf(join(outDir, manifest.modelFile?.file ?? RUN_FILES.model)));
  const recipe = recipeFromManifest(manifest, displayOf(runRecordPath(outDir)?.path ?? join(outDir, RUN_FILES.record)));
  const recipeDir = dirname(resolve(outDir, manifest.recipe.file));
  const dataPath = resolve(dataFile);
  if (!existsSync(dataPath)) throw new DendrologError(messages.dataFileMissing(dataFile), 2);
  if (!statSync(dataPath).isFile()) throw new DendrologError(messages.dataFileNotAFile(dataFile), 2);
  // "-": the CSV goes to stdout, nothing is written
  if (outFile !== '-') checkPredictionsTarget(outFile, {
    folder: outDir,
    data: dataPath,
    runInputs: [resolve(outDir, manifest.recipe.file), ...Object.values(recipe.sources).map((s) => resolve(recipeDir, s.file))],
  });

  const mainName = Object.keys(recipe.sources)[0];
  const main = recipe.sources[mainName];
  // the target, and the raw columns a step computes it from, may be absent from new data
  const rowSteps = recipeSteps(recipe).filter((s) => !s.learned);
  const targetInputs = new Set([recipe.target]);
  for (const s of rowSteps) for (const w of s.contract.writes?.(s.params) ?? []) if (w.column === recipe.target) w.from.forEach((c) => targetInputs.add(c));
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

  // the run's own data steps, planned in apply mode and run by the executor (nothing cached); the
  // run's recipe as kept in its manifest has no positions, so messages name the recipe file
  const recipeWhere = displayOf(resolve(outDir, manifest.recipe.file));
  // the steps do without the target and the raw columns it is computed from; a derived column the
  // target reads (which may also be a predictor) is still computed, from what the file has
  const derived = new Set(rowSteps.flatMap((s) => s.contract.writes?.(s.params) ?? []).map((w) => w.column));
  const without = new Set([...targetInputs].filter((c) => c === recipe.target || !derived.has(c)));
  const plan = planApply(recipe, { dir: recipeDir, where: () => recipeWhere }, { path: dataPath, absent, without: absentTarget.length > 0 ? without : null });
  const execution = await localExecutor({ cache: null, workers: 1, progress: silentProgress() }).run(plan.steps);
  const frameOf = (id: string) => (execution.outputs.get(id) as FrameOutput).frame;
  const input = frameOf(plan.read);
  const reason = new Array<string | null>(input.rows).fill(null);
  plan.dataSteps.forEach((step, s) => {
    if (s === 0) return;
    const before = frameOf(plan.dataSteps[s - 1].id);
    const kept = new Set(column(frameOf(step.id), ROW_COLUMN).values as Float64Array);
    (column(before, ROW_COLUMN).values as Float64Array).forEach((r, k) => {
      if (!kept.has(r) && reason[r] === null) reason[r] = step.removed(before, k);
    });
  });
  const frame = frameOf(plan.dataSteps[plan.dataSteps.length - 1].id);

  // rows with a missing predictor that no impute step fills cannot be predicted; say so per row
  const rowsOf = column(frame, ROW_COLUMN).values as Float64Array;
  const usable: number[] = [];
  // and so can rows with a category the training rows never had, when its one_hot step says "error":
  // a reason on that row, not a refusal of the whole file (the fold models of a run that finished
  // saw every training category, so the headline's design decides for them too)
  const strict = model.design.predictors.flatMap((p) => {
    const oh = model.design.oneHot[p];
    return oh && oh.unseen === 'error' ? [{ p, known: new Set(oh.categories) }] : [];
  });
  for (let k = 0; k < frame.rows; k++) {
    const missing = model.design.predictors.filter((p) => isMissing(column(frame, p), k) && !has(model.design.impute, p));
    const unseen = strict.find(({ p, known }) => !isMissing(column(frame, p), k) && !known.has(String(column(frame, p).values[k])));
    if (missing.length) reason[rowsOf[k]] = `missing ${missing.join(', ')}`;
    else if (unseen) reason[rowsOf[k]] = messages.unseenCategoryRow(unseen.p, String(column(frame, unseen.p).values[k]));
    else usable.push(k);
  }
  const predictions = new Array<number | null>(input.rows).fill(null);
  const bounds = new Array<{ low: number; high: number } | null>(input.rows).fill(null);
  const outside = new Array<string>(input.rows).fill('');
  if (usable.length) {
    const p = await engineFor(model.kind, model.model).predict(model.bytes, applyDesign(model.design, frame, usable), 'prediction of the new rows');
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
    if (model.interval) {
      const interval = model.interval;
      const engine = engineFor(model.kind, model.model);
      const mus = await Promise.all(interval.folds.map((f, k) => engine.predict(f.bytes, applyDesign(f.design, frame, usable), `prediction of the new rows by fold model ${k + 1}`)));
      const mu = new Float64Array(mus.length);
      usable.forEach((k, j) => {
        mus.forEach((m, f) => (mu[f] = m[j]));
        bounds[rowsOf[k]] = cvPlus(interval.table, mu, interval.level);
      });
    }
  }

  const declared = input.columns;
  // with a target scale, the prediction also on the quantity's own scale (a median for a log target)
  const scale = recipe.target_scale;
  const t = recipe.target;
  const withBounds = model.interval !== undefined;
  const boundNames = (suffix: string) => (withBounds ? [`low_${t}${suffix}`, `high_${t}${suffix}`] : []);
  const original = scale ? [`predicted_${t}_original`, ...boundNames('_original')] : [];
  const lines = [[...declared.map((c) => c.name), 'input_row', `predicted_${t}`, ...boundNames(''), ...original, 'outside_training_range', 'not_predicted_because'].map(csvField).join(',')];
  const text = (v: number | undefined, f: (v: number) => number = (x) => x) => (v === undefined ? '' : String(f(v)));
  for (let r = 0; r < input.rows; r++) {
    const fields = declared.map((c) => formatValue(c, r));
    const p = predictions[r];
    const b = bounds[r] ?? undefined;
    fields.push(String(r + 1), p === null ? '' : String(p));
    if (withBounds) fields.push(text(b?.low), text(b?.high));
    if (scale) {
      const back = TARGET_SCALES[scale].inverse;
      fields.push(p === null ? '' : String(back(p)));
      if (withBounds) fields.push(text(b?.low, back), text(b?.high, back));
    }
    fields.push(outside[r], p === null ? (reason[r] ?? 'not predicted') : '');
    lines.push(fields.map(csvField).join(','));
  }
  if (outFile === '-') process.stdout.write(lines.join('\n') + '\n');
  else replaceFile(outFile, lines.join('\n') + '\n');
  return {
    model: model.model,
    headline: bundle.headline,
    rows: input.rows,
    predicted: predictions.filter((p) => p !== null).length,
    notPredicted: predictions.filter((p) => p === null).length,
    outsideRange: outside.filter((o) => o !== '').length,
    intervalLevel: model.interval?.level ?? null,
    skippedSteps: plan.skipped,
    warnings: execution.warnings,
    out: outFile,
  };
}

/** Every column the recipe's joins, cleaning, features and predictors refer to. */
function usedColumns(recipe: Recipe): Set<string> {
  const used = new Set<string>(recipe.predictors);
  for (const j of recipe.join) j.on.forEach((c) => used.add(c));
  for (const { contract, params } of recipeSteps(recipe)) for (const r of contract.reads(params)) used.add(r.column);
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
