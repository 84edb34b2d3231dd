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
import { OLD_FILES, RUN_FILES } from './run-files.js';
import { parseJson } from '../core/dict.js';

const MAGIC = 'DLM1';
/** The model file's first line, readable with `head -1`; the number is the file layout's version. */
export const MODEL_FILE_LINE = 'dendrolog model 2\n';

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
   * The holdout predictions' SHA-256 of the run that wrote the file, as its run record holds it, so
   * a model file from another run is told apart even when a record was edited to match its bytes.
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
 * model.dendro: the line "dendrolog model 2", then gzip of "DLM1", a 4-byte header length, a JSON
 * header and the engine's bytes (older versions wrote the gzip part alone, as model.bin); with
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
  const body = gzipSync(Buffer.concat([Buffer.from(MAGIC, 'latin1'), len, header, bytes, ...foldBytes]), { level: 1 });
  return new Uint8Array(Buffer.concat([Buffer.from(MODEL_FILE_LINE, 'latin1'), body]));
}

type StoredInterval = Omit<ModelInterval, 'folds'> & { folds: { design: FitOutput['design']; bytesLength: number }[] };

/** Reads a model file back (either layout); throws a plain Error if the bytes are not a dendrolog model file. */
export function readModelFile(data: Uint8Array): ModelFile {
  const start = Buffer.from(data.subarray(0, MODEL_FILE_LINE.length)).toString('latin1');
  const gzipped = start === MODEL_FILE_LINE ? data.subarray(MODEL_FILE_LINE.length) : data;
  if (start !== MODEL_FILE_LINE && !(data[0] === 0x1f && data[1] === 0x8b)) throw new Error('not a dendrolog model file (it does not start with "dendrolog model")');
  const raw = gunzipSync(gzipped);
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

/** Why a run folder's model file cannot be used, as a message naming the file and an exit code. */
export interface ModelFileProblem {
  kind: 'missing' | 'unrecorded' | 'unreadable' | 'truncated' | 'changed' | 'undecodable';
  message: string;
  exitCode: 1 | 2;
}

/**
 * Reads a run folder's model file (the name its run record gives) and checks it against the size
 * and SHA-256 the record holds,
 * so a truncated copy, an edit or another run's file is named instead of being used.
 *
 * Example: `const r = readRunModel(folder, readManifest(folder)); if ('problem' in r) throw …`
 */
export function readRunModel(outDir: string, manifest: Manifest): { model: ModelFile } | { problem: ModelFileProblem } {
  // a record without modelFile predates model.dendro, so its model file, if any, is model.bin; a
  // model.dendro beside such a record is named as unrecorded, never trusted
  const name = manifest.modelFile?.file ?? (existsSync(join(outDir, RUN_FILES.model)) ? RUN_FILES.model : OLD_FILES.model);
  const path = join(outDir, name);
  const file = displayOf(path);
  const problem = (kind: ModelFileProblem['kind'], message: string, exitCode: 1 | 2 = 1) => ({ problem: { kind, message, exitCode } });
  if (!existsSync(path)) return problem('missing', messages.modelFileMissing(displayOf(outDir), name), 2);
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
