import { existsSync, readFileSync } from 'node:fs';
import { join } from 'node:path';
import { gunzipSync, gzipSync } from 'node:zlib';
import type { FitOutput, IntervalFoldOutput, PredictionIntervalOutput } from '../steps/index.js';
import type { ConformalTable } from '../models/conformal.js';
import type { Recipe } from '../core/recipe-types.js';
import { sha256 } from '../core/hash.js';
import type { Manifest } from './manifest.js';
import { messages } from '../core/messages.js';
import { displayOf } from './paths.js';
import { parseJson } from '../core/dict.js';

const MAGIC = 'DLM1';

/** Everything `predict` needs besides the recipe: the fitted model and what it learned. */
export interface ModelFile {
  format: 1;
  model: string;
  kind: FitOutput['kind'];
  cell: FitOutput['cell'];
  used: FitOutput['used'];
  design: FitOutput['design'];
  ranges: FitOutput['ranges'];
  target: string;
  trainingRows: number;
  /**
   * The holdout predictions' SHA-256 of the run that wrote the file, as its manifest records it, so
   * a model.bin from another run is told apart even when a manifest was edited to match its bytes.
   */
  run?: { holdoutPredictionsSha256: string };
  /** The engine's own serialized model. */
  bytes: Uint8Array;
  /** The CV+ prediction intervals: the level, the fold residuals and each fold model; absent when the run had none. */
  interval?: ModelInterval;
}

export interface ModelInterval {
  level: number;
  unitKind: PredictionIntervalOutput['unitKind'];
  table: ConformalTable;
  folds: { design: FitOutput['design']; bytes: Uint8Array }[];
}

/**
 * model.bin: gzip of "DLM1", a 4-byte header length, a JSON header and the engine's bytes; with
 * prediction intervals, the header gives the headline model's byte length and each fold model's,
 * and the fold models follow it in fold order. gzip from Node writes no timestamp, so equal models
 * give equal files. Level 1: a forest's floating-point bytes shrink by about a fifth at any level,
 * and level 9 took ten times as long (11 s against 1.1 s for a 54 MB forest).
 *
 * Example: `readModelFile(writeModelFile(fit, null, recipe, run)).kind === fit.kind`
 */
export function writeModelFile(
  fit: FitOutput,
  interval: { output: PredictionIntervalOutput; folds: IntervalFoldOutput[] } | null,
  recipe: Recipe,
  run: { holdoutPredictionsSha256: string },
): Uint8Array {
  const bytes = Buffer.from(fit.bytes);
  const table = interval?.output.table ?? null;
  const foldBytes = interval && table ? interval.folds.map((f) => Buffer.from(f.bytes)) : [];
  const header = Buffer.from(
    JSON.stringify({
      format: 1,
      model: fit.model,
      kind: fit.kind,
      cell: fit.cell,
      used: fit.used,
      design: fit.design,
      ranges: fit.ranges,
      target: recipe.target,
      trainingRows: fit.trainingRows,
      run,
      ...(interval && table
        ? {
            bytesLength: bytes.length,
            interval: {
              level: interval.output.level,
              unitKind: interval.output.unitKind,
              table,
              folds: interval.folds.map((f, k) => ({ design: f.design, bytesLength: foldBytes[k].length })),
            },
          }
        : {}),
    }),
    'utf8',
  );
  const len = Buffer.alloc(4);
  len.writeUInt32LE(header.length, 0);
  return new Uint8Array(gzipSync(Buffer.concat([Buffer.from(MAGIC, 'latin1'), len, header, bytes, ...foldBytes]), { level: 1 }));
}

type StoredInterval = Omit<ModelInterval, 'folds'> & { folds: { design: FitOutput['design']; bytesLength: number }[] };

/** Reads model.bin back; throws a plain Error if the bytes are not a dendrolog model file. */
export function readModelFile(data: Uint8Array): ModelFile {
  const raw = gunzipSync(data);
  if (raw.subarray(0, 4).toString('latin1') !== MAGIC) throw new Error('not a dendrolog model file');
  const n = raw.readUInt32LE(4);
  if (8 + n > raw.length) throw new Error(`the model header claims ${n} bytes, more than the file holds`);
  const { interval, bytesLength, ...header } = parseJson(raw.subarray(8, 8 + n).toString('utf8')) as Omit<ModelFile, 'bytes' | 'interval'> & {
    interval?: StoredInterval;
    bytesLength?: number;
  };
  const body = raw.subarray(8 + n);
  if (!interval) return { ...header, bytes: new Uint8Array(body) };
  const lengths = [bytesLength ?? 0, ...interval.folds.map((f) => f.bytesLength)];
  const total = lengths.reduce((a, b) => a + b, 0);
  if (total !== body.length) throw new Error(`the model header lists ${total} bytes of models, but ${body.length} follow it`);
  let at = 0;
  const [bytes, ...folds] = lengths.map((len) => new Uint8Array(body.subarray(at, (at += len))));
  return { ...header, bytes, interval: { ...interval, folds: interval.folds.map((f, k) => ({ design: f.design, bytes: folds[k] })) } };
}

/** Why a run folder's model.bin cannot be used, as a message naming the file and an exit code. */
export interface ModelFileProblem {
  kind: 'missing' | 'unrecorded' | 'unreadable' | 'truncated' | 'changed' | 'undecodable';
  message: string;
  exitCode: 1 | 2;
}

/**
 * Reads a run folder's model.bin and checks it against the size and SHA-256 its manifest recorded,
 * so a truncated copy, an edit or another run's file is named instead of being used.
 *
 * Example: `const r = readRunModel(folder, readManifest(folder)); if ('problem' in r) throw …`
 */
export function readRunModel(outDir: string, manifest: Manifest): { model: ModelFile } | { problem: ModelFileProblem } {
  const path = join(outDir, 'model.bin');
  const file = displayOf(path);
  const problem = (kind: ModelFileProblem['kind'], message: string, exitCode: 1 | 2 = 1) => ({ problem: { kind, message, exitCode } });
  if (!existsSync(path)) return problem('missing', messages.modelFileMissing(displayOf(outDir)), 2);
  const recorded = manifest.modelFile;
  if (!recorded) return problem('unrecorded', messages.modelFileUnrecorded(file));
  let data: Buffer;
  try {
    data = readFileSync(path);
  } catch (e) {
    return problem('unreadable', messages.modelFileUndecodable(file, (e as Error).message));
  }
  const decoded = decodeModel(data);
  const actual = sha256(data);
  if (actual !== recorded.sha256) {
    // shorter and no longer a whole gzip stream: cut off, rather than some other model
    if (data.length < recorded.bytes && 'error' in decoded) return problem('truncated', messages.modelFileTruncated(file, data.length, recorded.bytes));
    return problem('changed', messages.modelFileChanged(file, recorded.sha256, actual));
  }
  if ('error' in decoded) return problem('undecodable', messages.modelFileUndecodable(file, decoded.error));
  if (decoded.model.run?.holdoutPredictionsSha256 !== manifest.holdoutPredictionsSha256) return problem('changed', messages.modelFileOtherRun(file));
  return decoded;
}

function decodeModel(data: Uint8Array): { model: ModelFile } | { error: string } {
  try {
    return { model: readModelFile(data) };
  } catch (e) {
    return { error: (e as Error).message };
  }
}
