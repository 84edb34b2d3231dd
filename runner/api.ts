/**
 * dendrolog as a library: the five commands as functions, for scripts and notebooks that drive
 * analyses without the command line. Each does what its command does and throws a DendrologError
 * (with the command's exit code in `exitCode`) where the command would print an error.
 *
 * ```js
 * import { run, check, verify, compare, predict } from 'dendrolog';
 * await check('analysis/lake.yaml');
 * const { outDir, headline } = await run('analysis/lake.yaml', { workers: 2 });
 * const same = await verify(outDir);
 * ```
 */
import { compareManifests, comparisonMarkdown, type Comparison } from './compare.js';
import { checkData } from './check-data.js';
import { DendrologError } from '../core/messages.js';
import { predictRun, type PredictionSummary } from './predict.js';
import { silentProgress, type Progress } from './progress.js';
import { loadRecipe } from './recipe.js';
import { readManifest } from './run-folder.js';
import { defaultWorkers, runRecipe } from './run.js';
import { verifyRun, type Verification } from './verify.js';
import type { Manifest } from './manifest.js';
import type { Recipe } from '../core/recipe-types.js';

export { DendrologError };
export type { Comparison, Manifest as RunRecord, PredictionSummary, Progress, Recipe, Verification };

export interface RunOptions {
  /** The run folder; default `<recipe folder>/<report.folder>/<recipe name>`. */
  out?: string;
  /** The cache folder (default: DENDROLOG_CACHE, else `dendrolog-cache` in the working folder), or false for none. */
  cache?: string | false;
  /** Threads (default: one per core); results are identical for any number. */
  workers?: number;
  /** Called with each step's line as it finishes; default: silent. */
  progress?: Progress;
}

/** What a run gives back: where its folder is, its headline and its run record. */
export interface RunOutcome {
  outDir: string;
  headline: { model: string; holdoutR2: number | null };
  warnings: string[];
  record: Manifest;
}

/**
 * Runs a recipe file and writes its run folder, as `dendrolog run`.
 *
 * Example: `(await run('lake.yaml', {workers: 2})).headline.model`
 */
export async function run(recipe: string, opts: RunOptions = {}): Promise<RunOutcome> {
  const r = await runRecipe(recipe, {
    out: opts.out,
    cache: opts.cache === false ? undefined : opts.cache,
    noCache: opts.cache === false,
    workers: opts.workers ?? defaultWorkers(),
    progress: opts.progress ?? silentProgress(),
  });
  return {
    outDir: r.outDir,
    headline: { model: r.manifest.headline.model, holdoutR2: r.manifest.headline.value },
    warnings: r.manifest.warnings.map((w) => w.message),
    record: r.manifest,
  };
}

/**
 * Checks a recipe and opens its data, as `dendrolog check`: resolves when both are sound, throws a
 * DendrologError naming every problem otherwise.
 *
 * Example: `await check('lake.yaml')`
 */
export async function check(recipe: string): Promise<{ sources: number; models: number }> {
  const { recipe: r, origin } = loadRecipe(recipe, { checkFiles: true });
  const problems = await checkData(r, origin);
  if (problems.length > 0) throw new DendrologError(problems.join('\n'), 1);
  return { sources: Object.keys(r.sources).length, models: Object.keys(r.models).length };
}

/**
 * Reruns a run folder's recipe from its sources with an empty cache, as `dendrolog verify`.
 *
 * Example: `(await verify('out/lake')).reproduced`
 */
export async function verify(runFolder: string, opts: { workers?: number; progress?: Progress } = {}): Promise<Verification> {
  return verifyRun(runFolder, { workers: opts.workers ?? defaultWorkers(), progress: opts.progress ?? silentProgress() });
}

/**
 * What changed between two run folders, as `dendrolog compare`: the comparison and its Markdown.
 *
 * Example: `(await compare('out/lake', 'out/lake-deeper')).comparison.verdicts`
 */
export async function compare(oldRunFolder: string, newRunFolder: string): Promise<{ comparison: Comparison; markdown: string }> {
  const comparison = compareManifests(readManifest(oldRunFolder), readManifest(newRunFolder));
  return { comparison, markdown: comparisonMarkdown(comparison, oldRunFolder, newRunFolder) };
}

/**
 * Applies a run's cleaning, features and headline model (or `opts.model`, another model the run
 * fitted) to a new data file, as `dendrolog predict`.
 *
 * Example: `await predict('out/lake', 'new-samples.csv', 'predictions.csv', { model: 'linear' })`
 */
export async function predict(runFolder: string, dataFile: string, outFile: string, opts: { model?: string } = {}): Promise<PredictionSummary> {
  return predictRun(runFolder, dataFile, outFile, opts);
}
