import { existsSync } from 'node:fs';
import { availableParallelism } from 'node:os';
import { join, resolve } from 'node:path';
import { ABANDONED_WRITE_MS, Cache } from './cache.js';
import { localExecutor, type Execution } from './execute.js';
import { buildManifest, manifestProblems, type Manifest } from './manifest.js';
import { RUN_FILES } from './run-files.js';
import { prepareRunFolder, writeFolderAtomically } from './output.js';
import { planRecipe, type Plan } from './plan.js';
import type { Progress } from './progress.js';
import { loadRecipe, type RecipeOrigin } from './recipe.js';
import type { Recipe, TargetScale } from '../core/recipe-types.js';
import { TARGET_SCALES } from '../steps/index.js';
import { reportView } from './report-view.js';
import { gatherResults, type Results } from './results.js';
import { runModelFile } from './model-file.js';
import { shortenTexts } from './shorten.js';
import { SlurmRunner, type SlurmOptions } from './slurm.js';
import { DendrologError, messages } from '../core/messages.js';

export interface RunOptions {
  /** Output folder; default `<recipe folder>/<report.folder>/<recipe name>`. */
  out?: string;
  /** Cache folder; default DENDROLOG_CACHE, else `dendrolog-cache` under the working folder. */
  cache?: string;
  noCache?: boolean;
  /** Threads for grid cells, final fits and trees; default defaultWorkers(), one per core. */
  workers?: number;
  progress: Progress;
  /** With Slurm options, the parallel steps run as Slurm job arrays over the (shared) cache. */
  slurm?: SlurmOptions;
}

export interface RunResult {
  /** Steps that ran side by side on worker threads. */
  stepsOnThreads: number;
  outDir: string;
  manifest: Manifest;
  results: Results;
}

/** Threads when none are asked for, for the command line and the API alike: one per core. Results never depend on it. */
export function defaultWorkers(): number {
  return availableParallelism();
}

/** Default cache folder, relative to the working folder. */
export const DEFAULT_CACHE = 'dendrolog-cache';

/** The cache folder the DENDROLOG_CACHE environment variable names, when it names one. */
export function cacheFromEnvironment(): string | undefined {
  const v = process.env.DENDROLOG_CACHE;
  return v === undefined || v.trim() === '' ? undefined : v;
}

/** Where dendrolog versions before DEFAULT_CACHE kept the default cache; never read, only pointed out. */
export const OLD_DEFAULT_CACHE = join('.dendrolog', 'cache');

/**
 * Runs a recipe end to end:
 *
 * ```
 * <analysis>.yaml --1 read--> YAML with positions
 *             --2 validate (schemas/recipe.v1.json)--> problems as file:line:column
 *             --3 normalize--> Recipe, every default written out
 *             --4 plan--> step instances, each with a content key
 *             --5 execute--> each step from the cache, or run and stored
 *             --6 gather--> results and evaluation warnings
 *             --7 render--> report.html, summary.md, run-record.json, model.dendro, predictions.csv, moved into place at once
 * ```
 *
 * Example: `await runRecipe('recipes/lake-chlorophyll/lake-chlorophyll.yaml', {progress: silentProgress()})`
 */
export async function runRecipe(recipePath: string, opts: RunOptions): Promise<RunResult> {
  const started = new Date();
  const t0 = performance.now();
  // 1–3: read, validate and normalize in one place; nothing later sees raw YAML
  const { recipe, origin } = loadRecipe(recipePath, { checkFiles: true });
  const outDir = resolve(opts.out ?? resolve(origin.dir, recipe.report.folder, recipe.name));
  // a folder that may not be replaced is refused before the work, not after it
  prepareRunFolder(outDir);
  // 4–6: plan, execute, gather
  if (opts.slurm && opts.noCache) throw new DendrologError(messages.clusterNeedsCache(), 2);
  const cache = opts.noCache ? null : new Cache(resolve(opts.cache ?? cacheFromEnvironment() ?? DEFAULT_CACHE));
  if (cache && opts.cache === undefined && cacheFromEnvironment() === undefined && existsSync(OLD_DEFAULT_CACHE)) opts.progress.note(messages.oldCacheFolder(OLD_DEFAULT_CACHE, DEFAULT_CACHE));
  cache?.sweepTemporaries(ABANDONED_WRITE_MS);
  // the report's code (vega, vega-lite, handlebars: about a third of a second to load) loads while
  // the steps run, and other commands never load it
  const reporting = reportCode();
  const { execution, results } = await executeRecipe(recipe, origin, { cache, workers: opts.workers ?? defaultWorkers(), progress: opts.progress, slurm: opts.slurm });
  // 7: render and write
  const modelBin = runModelFile(recipe, results);
  // texts from the data are shortened in the record; the recipe stays whole, since verify reruns it
  const manifest = shortenTexts(
    buildManifest(recipe, origin, execution, results, { started, seconds: (performance.now() - t0) / 1000 }, outDir, modelBin),
    new Set(['recipe', 'environment']),
  );
  const problems = manifestProblems(manifest);
  if (problems.length > 0) throw new Error(`the manifest does not match schemas/run-record.v1.json: ${problems.join('; ')}`);
  const { buildFigures, renderReport, renderSummary } = await reporting;
  const view = reportView(recipe, results, manifest, await buildFigures(recipe, results));
  writeFolderAtomically(outDir, {
    [RUN_FILES.report]: renderReport(view),
    [RUN_FILES.summary]: renderSummary(view),
    [RUN_FILES.record]: JSON.stringify(manifest, null, 2) + '\n',
    [RUN_FILES.model]: modelBin,
    [RUN_FILES.predictions]: predictionsCsv(results, recipe.target_scale),
  });
  return { outDir, manifest, results, stepsOnThreads: execution.onThreads };
}

/** The modules that draw and render the report, loaded on demand; a failure to load is the awaiting caller's. */
function reportCode(): Promise<typeof import('./plots.js') & typeof import('./render.js')> {
  const loading = Promise.all([import('./plots.js'), import('./render.js')]).then(([plots, render]) => ({ ...plots, ...render }));
  // a run that stops before rendering never awaits it: that must not become an unhandled rejection
  loading.catch(() => undefined);
  return loading;
}

/**
 * Plans, executes and gathers a normalized recipe (phases 4 to 6). `verify` calls it too, with
 * the recipe kept in a manifest and an empty cache.
 */
export async function executeRecipe(
  recipe: Recipe,
  origin: RecipeOrigin,
  opts: { cache: Cache | null; workers: number; progress: Progress; slurm?: SlurmOptions },
): Promise<{ plan: Plan; execution: Execution; results: Results }> {
  const plan = planRecipe(recipe, origin);
  const cells = Object.values(plan.models).reduce((n, m) => n + m.cells.length, 0);
  opts.progress.note(
    `${recipe.name}: ${plan.steps.length} steps; ${cells} grid cells × ${recipe.evaluation.folds.k} folds = ${cells * recipe.evaluation.folds.k} cross-validation fits, then ${Object.keys(plan.models).length} final fits`,
  );
  const remote = opts.slurm && opts.cache ? new SlurmRunner(opts.cache, opts.slurm, opts.progress) : undefined;
  const executor = localExecutor({ cache: opts.cache, workers: opts.workers, progress: opts.progress, remote });
  const execution = await executor.run(plan.steps);
  return { plan, execution, results: gatherResults(recipe, plan, execution) };
}

/**
 * predictions.csv: the headline model's prediction for every modelling row, in input order
 * (model_row counts the rows that survived cleaning, from 0), with the set each row was in; with a
 * target scale, observed and predicted also back on the quantity's own scale. With prediction
 * intervals, each holdout row's CV+ bounds (low, high); training rows leave them empty.
 */
export function predictionsCsv(results: Results, scale: TargetScale | null): string {
  const back = scale ? TARGET_SCALES[scale].inverse : null;
  const bounds = results.headlineInterval !== null;
  const head = ['model_row', 'set', 'observed', 'predicted', ...(bounds ? ['low', 'high'] : [])];
  if (back) head.push('observed_original', 'predicted_original', ...(bounds ? ['low_original', 'high_original'] : []));
  const lines = [head.join(',')];
  // a training row has no interval: CV+ intervals are for rows the fold models did not see
  const cell = (v: number | undefined, f: (v: number) => number = (x) => x) => (v === undefined ? '' : String(f(v)));
  for (const p of results.predictions) {
    const row = [p.row, p.set, p.observed, p.predicted, ...(bounds ? [cell(p.low), cell(p.high)] : [])];
    if (back) row.push(back(p.observed), back(p.predicted), ...(bounds ? [cell(p.low, back), cell(p.high, back)] : []));
    lines.push(row.join(','));
  }
  return lines.join('\n') + '\n';
}
