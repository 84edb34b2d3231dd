import { existsSync, readFileSync } from 'node:fs';
import { join } from 'node:path';
import { constants, gunzipSync, gzipSync } from 'node:zlib';
import type { FitOutput, IntervalFoldOutput, PredictionIntervalOutput } from '../steps/index.js';
import type { ConformalTable } from '../models/conformal.js';
import type { Recipe } from '../core/recipe-types.js';
import { sha256 } from '../core/hash.js';
import { holdoutPredictionsSha256, type Manifest } from './manifest.js';
import type { Results } from './results.js';
import { DendrologError, messages } from '../core/messages.js';
import { closest } from '../core/suggest.js';
import { displayOf } from './paths.js';
import { OLD_FILES, RUN_FILES } from './run-files.js';
import { parseJson } from '../core/dict.js';

const MAGIC = 'DLM1';
/** The model file's first line, readable with `head -1`; the number is the file layout's version. */
export const MODEL_FILE_LINE = 'dendrolog model 3\n';
/** The first line of the layout that held the headline model only (dendrolog before --model). */
export const HEADLINE_ONLY_LINE = 'dendrolog model 2\n';

/** One fitted model as `predict` needs it besides the recipe: the engine's bytes and what the fit learned. */
export interface ModelFile {
  /** The model's name in the recipe. */
  model: string;
  kind: FitOutput['kind'];
  cell: FitOutput['cell'];
  used: FitOutput['used'];
  design: FitOutput['design'];
  ranges: FitOutput['ranges'];
  trainingRows: number;
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

/** A model file's contents: every model the run fitted (or, in older files, the headline alone). */
export interface ModelBundle {
  /** 1: model.bin; 2: model.dendro with the headline model only; 3: every model. */
  layout: 1 | 2 | 3;
  target: string;
  /** The model the run chose, which `predict` uses unless told otherwise. */
  headline: string;
  /**
   * The holdout predictions' SHA-256 of the run that wrote the file, as its run record holds it, so
   * a model file from another run is told apart even when a record was edited to match its bytes.
   */
  run?: { holdoutPredictionsSha256: string };
  models: ModelFile[];
}

/** A model's final fit and, with prediction intervals, its fold models and residual table. */
export interface FittedModel {
  fit: FitOutput;
  interval: { output: PredictionIntervalOutput; folds: IntervalFoldOutput[] } | null;
}

/** A fitted model as the model file keeps it. */
export function modelEntry({ fit, interval }: FittedModel): ModelFile {
  const table = interval?.output.table ?? null;
  return {
    model: fit.model,
    kind: fit.kind,
    cell: fit.cell,
    used: fit.used,
    design: fit.design,
    ranges: fit.ranges,
    trainingRows: fit.trainingRows,
    bytes: fit.bytes,
    ...(interval && table
      ? { interval: { level: interval.output.level, unitKind: interval.output.unitKind, table, folds: interval.folds.map((f) => ({ design: f.design, bytes: f.bytes })) } }
      : {}),
  };
}

/**
 * model.dendro: the line "dendrolog model 3", then gzip of "DLM1", a 4-byte header length, a JSON
 * header and the engines' bytes. The header names the target, the run and the headline model and
 * lists every model the run fitted, each with its byte length and, with prediction intervals, its
 * fold models' lengths; the bytes follow in that order (each model, then its fold models). Layout 2
 * (the line "dendrolog model 2") held the headline model alone; layout 1 (model.bin) was layout 2
 * without the first line. Both are still read, and written again only to verify a run folder that
 * holds one. gzip from Node writes no timestamp, so equal models give equal files. A forest's
 * floating-point bytes shrink by about a third at any level (level 9 took ten times as long as
 * level 1: 11 s against 1.1 s for a 54 MB forest); Huffman coding alone, which layout 3 uses, gives
 * nearly the same (15.0 MB of a 100-tree forest: 10.08 MB at level 1 in 226 ms, 10.32 MB in 122 ms).
 *
 * Example: `readModelFile(writeModelFile(bundle)).headline === bundle.headline`
 */
export function writeModelFile(bundle: Omit<ModelBundle, 'layout'> & { layout?: ModelBundle['layout'] }): Uint8Array {
  return new Uint8Array(Buffer.concat(modelFileChunks(bundle)));
}

/** writeModelFile's bytes as the parts they are made in, to be written one after another without first being joined in memory. */
export function modelFileChunks(bundle: Omit<ModelBundle, 'layout'> & { layout?: ModelBundle['layout'] }): Uint8Array[] {
  const layout = bundle.layout ?? 3;
  const models = layout === 3 ? bundle.models : bundle.models.filter((m) => m.model === bundle.headline);
  if (models.length === 0) throw new Error(`internal: the headline model ${bundle.headline} is not among the models to write`);
  // the models' bytes as they are, not copied: a large forest's are most of a run's memory
  const blobs: Uint8Array[] = [];
  const entries = models.map((m) => {
    const bytes = m.bytes;
    const folds = m.interval ? m.interval.folds.map((f) => f.bytes) : [];
    blobs.push(bytes, ...folds);
    const { bytes: _b, interval, ...fields } = m;
    const stored = interval ? { level: interval.level, unitKind: interval.unitKind, table: interval.table, folds: interval.folds.map((f, k) => ({ design: f.design, bytesLength: folds[k].length })) } : null;
    return { fields, bytesLength: bytes.length, interval: stored };
  });
  const header =
    layout === 3
      ? {
          format: 3,
          target: bundle.target,
          run: bundle.run,
          headline: bundle.headline,
          models: entries.map((e) => ({ ...e.fields, bytesLength: e.bytesLength, ...(e.interval ? { interval: e.interval } : {}) })),
        }
      : // the older header, key for key in its order, so a rerun writes the very bytes an older run did
        (() => {
          const e = entries[0];
          const f = e.fields;
          return {
            format: 1,
            model: f.model,
            kind: f.kind,
            cell: f.cell,
            used: f.used,
            design: f.design,
            ranges: f.ranges,
            target: bundle.target,
            trainingRows: f.trainingRows,
            run: bundle.run,
            ...(e.interval ? { bytesLength: e.bytesLength, interval: e.interval } : {}),
          };
        })();
  const json = Buffer.from(JSON.stringify(header), 'utf8');
  const len = Buffer.alloc(4);
  len.writeUInt32LE(json.length, 0);
  const head = Buffer.concat([Buffer.from(MAGIC, 'latin1'), len, json]);
  if (layout === 3) {
    // Huffman coding alone (no search for repeats, which floating-point bytes rarely have): half the
    // time of level 1 for a file 2% larger. One gzip member per part, one after another (a gzip
    // reader reads them as one stream), so the parts are never first copied into one buffer.
    const members = [head, ...blobs].map((part) => gzipSync(part, { level: 1, strategy: constants.Z_HUFFMAN_ONLY }));
    return [Buffer.from(MODEL_FILE_LINE, 'latin1'), ...members];
  }
  // the older layouts as they were, byte for byte
  const body = gzipSync(Buffer.concat([head, ...blobs]), { level: 1 });
  if (layout === 1) return [body];
  return [Buffer.from(HEADLINE_ONLY_LINE, 'latin1'), body];
}

/**
 * The model file of a run: every model it fitted, the chosen one named as the headline. A layout
 * below 3 (headline only) is written only to compare a rerun with a run folder an older version wrote.
 * In parts (see modelFileChunks): a large forest's file is never joined in memory.
 */
export function runModelFile(recipe: Recipe, results: Results, layout: ModelBundle['layout'] = 3): Uint8Array[] {
  return modelFileChunks({
    layout,
    target: recipe.target,
    run: { holdoutPredictionsSha256: holdoutPredictionsSha256(results) },
    headline: results.chosenModel,
    models: results.fitted.map(modelEntry),
  });
}

/** Which layout a model file's bytes have, from their start alone; null for bytes that are no model file. */
export function modelFileLayout(data: Uint8Array): ModelBundle['layout'] | null {
  const start = Buffer.from(data.subarray(0, MODEL_FILE_LINE.length)).toString('latin1');
  if (start === MODEL_FILE_LINE) return 3;
  if (start === HEADLINE_ONLY_LINE) return 2;
  return data[0] === 0x1f && data[1] === 0x8b ? 1 : null;
}

type StoredInterval = Omit<ModelInterval, 'folds'> & { folds: { design: FitOutput['design']; bytesLength: number }[] };
type StoredModel = Omit<ModelFile, 'bytes' | 'interval'> & { bytesLength?: number; interval?: StoredInterval };

/** Reads a model file back (any layout); throws a plain Error if the bytes are not a dendrolog model file. */
export function readModelFile(data: Uint8Array): ModelBundle {
  const layout = modelFileLayout(data);
  if (layout === null) throw new Error('not a dendrolog model file (it does not start with "dendrolog model")');
  const raw = gunzipSync(layout === 1 ? data : data.subarray(MODEL_FILE_LINE.length));
  if (raw.subarray(0, 4).toString('latin1') !== MAGIC) throw new Error('not a dendrolog model file');
  const n = raw.readUInt32LE(4);
  if (8 + n > raw.length) throw new Error(`the model header claims ${n} bytes, more than the file holds`);
  const header = parseJson(raw.subarray(8, 8 + n).toString('utf8')) as Record<string, unknown>;
  const body = raw.subarray(8 + n);
  if (layout === 3) {
    const { target, run, headline, models } = header as { target: string; run?: ModelBundle['run']; headline: string; models: StoredModel[] };
    if (!Array.isArray(models)) throw new Error('the model header lists no models');
    const lengths = models.flatMap((m) => [m.bytesLength ?? 0, ...(m.interval?.folds.map((f) => f.bytesLength) ?? [])]);
    const blobs = cut(body, lengths);
    return { layout, target, run, headline, models: models.map((m) => storedModel(m, blobs)) };
  }
  // layouts 1 and 2: one model; without an interval, its bytes are all that follows the header
  const { format: _f, target, run, ...model } = header as StoredModel & { format: number; target: string; run?: ModelBundle['run'] };
  const blobs = model.interval ? cut(body, [model.bytesLength ?? 0, ...model.interval.folds.map((f) => f.bytesLength)]) : [new Uint8Array(body.buffer, body.byteOffset, body.length)];
  return { layout, target, run, headline: model.model, models: [storedModel(model, blobs)] };
}

/** Cuts the models' bytes by the lengths the header lists, refusing a file whose lengths do not add up. */
function cut(body: Buffer, lengths: number[]): Uint8Array[] {
  const total = lengths.reduce((a, b) => a + b, 0);
  if (total !== body.length) throw new Error(`the model header lists ${total} bytes of models, but ${body.length} follow it`);
  let at = body.byteOffset;
  // views of the file's bytes, not copies
  return lengths.map((len) => {
    const blob = new Uint8Array(body.buffer, at, len);
    at += len;
    return blob;
  });
}

/** A model from its header entry, taking its bytes (and its fold models') from the front of blobs. */
function storedModel(m: StoredModel, blobs: Uint8Array[]): ModelFile {
  const { bytesLength: _l, interval, ...fields } = m;
  const bytes = blobs.shift()!;
  if (!interval) return { ...fields, bytes };
  return { ...fields, bytes, interval: { ...interval, folds: interval.folds.map((f) => ({ design: f.design, bytes: blobs.shift()! })) } };
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
export function readRunModel(outDir: string, manifest: Manifest): { bundle: ModelBundle } | { problem: ModelFileProblem } {
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
  if (decoded.bundle.run?.holdoutPredictionsSha256 !== manifest.holdoutPredictionsSha256) return problem('changed', messages.modelFileOtherRun(file));
  return decoded;
}

function decodeModel(data: Uint8Array): { bundle: ModelBundle } | { error: string } {
  try {
    return { bundle: readModelFile(data) };
  } catch (e) {
    return { error: (e as Error).message };
  }
}

/**
 * The model a prediction uses: the headline, or the one named, which must be in the file (an older
 * model file holds the headline alone, and says so).
 *
 * Example: `pickModel(bundle, 'linear', 'out/model.dendro').model === 'linear'`
 */
export function pickModel(bundle: ModelBundle, name: string | undefined, file: string): ModelFile {
  const wanted = name ?? bundle.headline;
  const found = bundle.models.find((m) => m.model === wanted);
  if (found) return found;
  throw new DendrologError(
    bundle.layout === 3
      ? messages.modelNotInRun(wanted, file, bundle.models.map((m) => m.model), closest(wanted, bundle.models.map((m) => m.model)))
      : messages.modelFileHeadlineOnly(wanted, file, bundle.headline),
    2,
  );
}
