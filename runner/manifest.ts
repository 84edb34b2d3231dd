import { Ajv } from 'ajv';
import { readFileSync } from 'node:fs';
import { join, relative } from 'node:path';
import { packageRoot } from './paths.js';
import type { Execution } from './execute.js';
import { environment, gitState, softwareFingerprint, type Environment } from './environment.js';
import { sha256 } from '../core/hash.js';
import type { RecipeOrigin } from './recipe.js';
import type { Recipe } from '../core/recipe-types.js';
import type { Results } from './results.js';
import type { Warning } from '../core/step-types.js';
import { RUN_FILES } from './run-files.js';

export interface Manifest {
  manifest: 1;
  recipe: { file: string; sha256: string; normalized: Recipe };
  seed: number;
  sources: { name: string; file: string; sha256: string; tableSha256?: string; rows: number; columns: Results['sources'][number]['columns'] }[];
  steps: { id: string; kind: string; key: string; output: string }[];
  models: {
    name: string;
    kind: string;
    chosen: Record<string, unknown>;
    used: Record<string, unknown>;
    cells: { cell: Record<string, unknown>; crossValidated: unknown; perFold: unknown }[];
    metrics: { holdout: unknown; holdoutInterval90: unknown; crossValidated: unknown; training: unknown; outOfBag: { r2: number | null }; holdoutOriginalScale?: unknown };
    skill: Record<string, number | null>;
    /** Why the model could not be compared (its cross-validated score is undefined); absent when it could. */
    failed?: string;
    /** What the learned feature steps took from the rows each fit saw. */
    learned: { final: unknown; folds: unknown[] };
    importance: unknown;
    partialDependence: unknown;
    /** CV+ prediction intervals and their coverage of the holdout rows; absent when the recipe turns them off. */
    predictionInterval?: unknown;
  }[];
  headline: { model: string; metric: string; value: number | null; label: 'holdout' };
  holdoutPredictionsSha256: string;
  /**
   * The holdout as units, so compare can tell whether two runs scored the same rows: groups by name,
   * or rows by a hash of their target and time values; the list itself when it has at most MAX_LISTED_UNITS units.
   * Absent in manifests of older runs.
   */
  split?: { by: string; unit: 'group' | 'block' | 'row'; holdoutUnits: number; trainingUnits: number; digest: string; holdout?: string[] };
  /**
   * The headline model as written to its model file, so predict and verify can tell the run's own
   * file from a truncated, edited or foreign one. model.bin in records of older runs; absent in
   * older ones still.
   */
  modelFile?: { file: 'model.dendro' | 'model.bin'; sha256: string; bytes: number };
  environment: Environment & { fingerprint: string };
  git: { commit: string; dirty: boolean } | null;
  warnings: Warning[];
  /** The only part that changes between reruns of the same recipe. */
  timing: { started: string; seconds: number; steps: { id: string; status: 'ran' | 'cached'; seconds: number }[] };
}

/**
 * The run's reproducibility record. Everything outside `timing` is identical across reruns of the
 * same recipe, data and software. `modelBin` is the model file written beside it, in its parts.
 */
export function buildManifest(
  recipe: Recipe,
  origin: RecipeOrigin,
  exec: Execution,
  results: Results,
  timing: { started: Date; seconds: number },
  outDir: string,
  modelBin: Uint8Array[],
): Manifest {
  const headlineModel = results.models.find((m) => m.name === results.chosenModel)!;
  return {
    manifest: 1,
    recipe: { file: relative(outDir, origin.path).split('\\').join('/'), sha256: origin.sha256, normalized: recipe },
    seed: recipe.seed,
    sources: results.sources.map((s) => ({
      name: s.name,
      file: s.file,
      sha256: s.sha256,
      ...(s.tableSha256 ? { tableSha256: s.tableSha256 } : {}),
      rows: s.rows,
      columns: s.columns,
    })),
    steps: exec.records.map((r) => ({ id: r.id, kind: r.kind, key: r.key, output: r.output })),
    models: results.models.map((m) => ({
      name: m.name,
      kind: m.kind,
      chosen: m.cells[m.chosen].cell,
      used: m.used,
      cells: m.cells.map((c) => ({ cell: c.cell, crossValidated: c.pooled, perFold: c.perFold })),
      metrics: {
        holdout: m.holdout,
        holdoutInterval90: m.intervals,
        crossValidated: m.crossValidated,
        training: m.training,
        outOfBag: { r2: m.oobR2 },
        ...(m.original ? { holdoutOriginalScale: m.original } : {}),
      },
      skill: m.skill,
      ...(m.failed ? { failed: m.failed } : {}),
      learned: m.learned,
      importance: m.explain ? { measuredOn: 'holdout', repeats: m.explain.repeats, values: m.explain.importance } : null,
      partialDependence: m.explain ? { measuredOn: 'training', rows: m.explain.pdRows, method: m.explain.pdMethod, curves: m.explain.partialDependence } : null,
      ...(m.predictionInterval ? { predictionInterval: m.predictionInterval } : {}),
    })),
    headline: {
      model: results.chosenModel,
      metric: 'r2',
      value: headlineModel.holdout.r2.value,
      label: 'holdout',
    },
    holdoutPredictionsSha256: holdoutPredictionsSha256(results),
    split: splitRecord(results),
    modelFile: { file: RUN_FILES.model, sha256: sha256(modelBin), bytes: modelBin.reduce((n, c) => n + c.length, 0) },
    environment: { ...environment(), fingerprint: softwareFingerprint() },
    git: gitState(origin.dir),
    warnings: results.warnings,
    timing: {
      started: timing.started.toISOString(),
      seconds: Number(timing.seconds.toFixed(3)),
      steps: exec.records.map((r) => ({ id: r.id, status: r.status, seconds: Number(r.seconds.toFixed(3)) })),
    },
  };
}

/** Holdouts of more units than this are recorded by digest and counts only, to keep the manifest small. */
export const MAX_LISTED_UNITS = 5000;

function splitRecord(results: Results): NonNullable<Manifest['split']> {
  const u = results.holdout.units;
  return {
    by: results.holdout.by,
    unit: u.kind,
    holdoutUnits: u.holdout.length,
    trainingUnits: u.training,
    digest: sha256(JSON.stringify(u.holdout)),
    ...(u.holdout.length <= MAX_LISTED_UNITS ? { holdout: u.holdout } : {}),
  };
}

/** SHA-256 of the headline model's holdout predictions: the run's fingerprint of what it predicted. */
export function holdoutPredictionsSha256(results: Results): string {
  return sha256(JSON.stringify(results.holdoutRows.predicted));
}

let validator: ReturnType<Ajv['compile']> | undefined;

/**
 * Checks a manifest against schemas/run-record.v1.json; returns the problems (empty when valid).
 * The runner calls it before writing, so a manifest on disk always matches its schema.
 */
export function manifestProblems(manifest: unknown): string[] {
  if (!validator) {
    const schema = JSON.parse(readFileSync(join(packageRoot(), 'schemas', 'run-record.v1.json'), 'utf8'));
    validator = new Ajv({ allErrors: true, strict: false, validateFormats: false }).compile(schema);
  }
  if (validator(manifest)) return [];
  return (validator.errors ?? []).map((e) => `${e.instancePath || '/'} ${e.message ?? 'is not valid'}`);
}
