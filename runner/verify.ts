import { existsSync, mkdirSync, mkdtempSync, readFileSync, readdirSync, rmSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { dirname, join, relative, resolve } from 'node:path';
import { Cache } from './cache.js';
import { environment, softwareFingerprint } from './environment.js';
import { sha256 } from '../core/hash.js';
import { buildManifest } from './manifest.js';
import { readRunModel, runModelFile } from './model-file.js';
import { DendrologError, messages } from '../core/messages.js';
import type { Progress } from './progress.js';
import { type RecipeOrigin } from './recipe.js';
import { displayOf } from './paths.js';
import type { Recipe } from '../core/recipe-types.js';
import { OLD_FILES, readManifest, runFolderChanges, runRecordPath, RUN_FILES } from './run-folder.js';
import { cacheFromEnvironment, DEFAULT_CACHE, executeRecipe } from './run.js';
import type { SlurmOptions } from './slurm.js';
import { dict } from '../core/dict.js';
import { recipeFromManifest } from './stored-recipe.js';

export interface Verification {
  reproduced: boolean;
  /** Plain lines for the terminal: the verdict first, then the evidence. */
  lines: string[];
}

/**
 * Re-executes a run from its sources with an empty temporary cache and compares every step's
 * output hash and every metric with the manifest. The run's own recipe (the normalized form kept in
 * the manifest) is what gets executed, so a later edit to the recipe file is reported, not silently used.
 *
 * Example: `(await verifyRun('recipes/lake-chlorophyll/out/lake-chlorophyll', opts)).reproduced`
 */
export async function verifyRun(folder: string, opts: { workers: number; progress: Progress; slurm?: SlurmOptions }): Promise<Verification> {
  const outDir = resolve(folder);
  const manifest = readManifest(outDir);
  const recipePath = resolve(outDir, manifest.recipe.file);
  const recipeDir = dirname(recipePath);
  const causes: string[] = [];
  // the folder's own model file must be the file the run wrote, whatever the rerun gives
  const modelCheck = readRunModel(outDir, manifest);
  const modelProblem = 'problem' in modelCheck ? modelCheck.problem : null;
  const modelBroken = modelProblem && modelProblem.kind !== 'unrecorded' ? modelProblem.message : null;

  if (!existsSync(recipePath)) throw new DendrologError(messages.recipeOfRunMissing(displayOf(recipePath)), 1);
  // the file's bytes, as the manifest records them (decoded text would hide a changed byte order mark or a stray byte)
  const recipeSha = sha256(readFileSync(recipePath));
  if (recipeSha !== manifest.recipe.sha256) {
    causes.push(`the recipe changed since the run: ${displayOf(recipePath)} had SHA-256 ${manifest.recipe.sha256.slice(0, 12)}…, now ${recipeSha.slice(0, 12)}…; the run's own recipe (kept in the run record) was executed below`);
  }
  const changedSources = new Map<string, string>();
  for (const s of manifest.sources) {
    const path = resolve(recipeDir, s.file);
    if (!existsSync(path)) throw new DendrologError(messages.sourceOfRunMissing(displayOf(path)), 1);
    const now = sha256(readFileSync(path));
    if (now !== s.sha256) {
      const line = `source file ${s.file} changed: SHA-256 was ${s.sha256}, now ${now}`;
      changedSources.set(s.name, line);
      causes.push(line);
    }
  }
  const env = environment();
  const envChanges: string[] = [];
  if (env.node !== manifest.environment.node) envChanges.push(`Node.js ${manifest.environment.node} → ${env.node}`);
  if (env.dendrolog !== manifest.environment.dendrolog) envChanges.push(`dendrolog ${manifest.environment.dendrolog} → ${env.dendrolog}`);
  for (const name of new Set([...Object.keys(manifest.environment.dependencies), ...Object.keys(env.dependencies)])) {
    const was = manifest.environment.dependencies[name];
    const now = env.dependencies[name];
    if (was !== now) envChanges.push(`${name} ${was ?? '(absent)'} → ${now ?? '(absent)'}`);
  }
  if (envChanges.length === 0 && softwareFingerprint() !== manifest.environment.fingerprint) {
    envChanges.push(`dendrolog's step or engine code (fingerprint ${manifest.environment.fingerprint.slice(0, 12)}… → ${softwareFingerprint().slice(0, 12)}…)`);
  }
  if (envChanges.length) causes.push(`software changed since the run: ${envChanges.join(', ')}`);

  // a pinned hash would stop the rerun at a changed file; the change is reported above instead
  const kept = recipeFromManifest(manifest, displayOf(runRecordPath(outDir)?.path ?? join(outDir, RUN_FILES.record)));
  const recipe: Recipe = {
    ...kept,
    sources: dict(Object.entries(kept.sources).map(([name, s]) => [name, { ...s, sha256: null }])),
  };
  const display = displayOf(recipePath);
  const origin: RecipeOrigin = {
    path: recipePath,
    dir: recipeDir,
    displayPath: display,
    sha256: manifest.recipe.sha256,
    text: '',
    doc: { displayPath: display, value: recipe, where: () => `${display} (as kept in the run record)`, whereKey: () => display, whereInValue: () => display },
  };
  // cluster tasks read and write the cache, so under Slurm the empty cache sits inside the default
  // one, in the working folder, which the nodes share; a local rerun uses the machine's own temp folder
  const tempBase = opts.slurm ? resolve(cacheFromEnvironment() ?? DEFAULT_CACHE) : tmpdir();
  mkdirSync(tempBase, { recursive: true });
  const cacheDir = mkdtempSync(join(tempBase, 'verify-'));
  let rerun;
  let rerunModelSha = '';
  let keep = false;
  try {
    const { execution, results } = await executeRecipe(recipe, origin, { cache: new Cache(cacheDir), workers: opts.workers, progress: opts.progress, slurm: opts.slurm });
    // the rerun's model file in the layout of the folder's own (an older one held the headline alone)
    const modelBytes = runModelFile(recipe, results, 'bundle' in modelCheck ? modelCheck.bundle.layout : manifest.modelFile?.file === OLD_FILES.model ? 1 : 3);
    rerun = buildManifest(recipe, origin, execution, results, { started: new Date(), seconds: 0 }, outDir, modelBytes);
    rerunModelSha = sha256(modelBytes);
  } catch (e) {
    // a failed cluster task's log lives in this cache: keep it, and do not promise a resumable rerun
    if (opts.slurm && e instanceof DendrologError && existsSync(join(cacheDir, 'tasks')) && readdirSync(join(cacheDir, 'tasks')).length > 0) {
      keep = true;
      throw new DendrologError(messages.clusterVerifyKept(e.message, displayOf(cacheDir)), e.exitCode);
    }
    throw e;
  } finally {
    if (!keep) rmSync(cacheDir, { recursive: true, force: true });
  }

  const lines: string[] = [];
  const now = new Map(rerun.steps.map((s) => [s.id, s]));
  let firstDiff: string | null = null;
  for (const s of manifest.steps) {
    const n = now.get(s.id);
    if (!n) {
      firstDiff = `step "${s.id}" of the run no longer exists in the plan`;
      break;
    }
    if (n.key !== s.key || n.output !== s.output) {
      const source = s.kind === 'source' ? changedSources.get(s.id.replace(/^source /, '')) : undefined;
      firstDiff =
        n.key !== s.key
          ? `step "${s.id}" has a different key (its inputs or parameters differ)${source ? `: ${source}` : ''}`
          : `step "${s.id}" gives a different output from the same inputs and parameters`;
      break;
    }
  }
  const metricDiffs: string[] = [];
  for (const m of manifest.models) {
    const r = rerun.models.find((x) => x.name === m.name);
    if (!r) {
      metricDiffs.push(`model ${m.name} is missing from the rerun`);
      continue;
    }
    if (JSON.stringify(r.metrics) !== JSON.stringify(m.metrics)) metricDiffs.push(`model ${m.name}: metrics differ`);
  }
  if (rerun.holdoutPredictionsSha256 !== manifest.holdoutPredictionsSha256) metricDiffs.push('the holdout predictions differ');
  if (manifest.modelFile && rerunModelSha !== manifest.modelFile.sha256) metricDiffs.push(`the headline model the rerun writes to ${manifest.modelFile.file} differs from the recorded one`);

  // the files people read (report, summary, predictions) must be the ones the run wrote
  const folderChanges = runFolderChanges(outDir);
  const reproduced = !firstDiff && metricDiffs.length === 0 && !modelBroken && folderChanges.length === 0 && recipeSha === manifest.recipe.sha256;
  const where = relative(process.cwd(), outDir) || '.';
  if (reproduced) {
    lines.push(
      `reproduced: ${where} — all ${manifest.steps.length} step outputs, the metrics of ${manifest.models.length} models, the holdout predictions${manifest.modelFile ? ` and ${manifest.modelFile.file}` : ''} match the run record, and the run folder's files are the ones the run wrote`,
    );
    if (modelProblem) lines.push(`note: ${modelProblem.message}`);
    if (envChanges.length) lines.push(`note: ${causes[causes.length - 1]}`);
  } else {
    lines.push(`not reproduced: ${where}`);
    if (modelBroken) lines.push(`model file: ${modelBroken}`);
    for (const c of folderChanges) lines.push(`run folder: ${c}`);
    if (firstDiff) lines.push(`first difference: ${firstDiff}`);
    else lines.push(`every step output matches${metricDiffs.length ? ', but ' + metricDiffs.join('; ') : ''}`);
    for (const d of firstDiff ? metricDiffs : []) lines.push(`also: ${d}`);
    if (causes.length) for (const c of causes) lines.push(`likely cause: ${c}`);
    else if (firstDiff) lines.push('likely cause: none found in the data, the recipe or the package versions; the step may depend on something outside them');
  }
  return { reproduced, lines };
}
