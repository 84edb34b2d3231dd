import { gunzipSync, gzipSync } from 'node:zlib';
import type { FitOutput } from '../steps/fit.js';
import type { Recipe } from './recipe-types.js';

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
  /** The engine's own serialized model. */
  bytes: Uint8Array;
}

/**
 * model.bin: gzip of "DLM1", a 4-byte header length, a JSON header and the engine's bytes. gzip
 * from Node writes no timestamp, so equal models give equal files.
 *
 * Example: `readModelFile(writeModelFile(fit, recipe)).kind === fit.kind`
 */
export function writeModelFile(fit: FitOutput, recipe: Recipe): Uint8Array {
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
    }),
    'utf8',
  );
  const bytes = Buffer.from(fit.bytes, 'base64');
  const len = Buffer.alloc(4);
  len.writeUInt32LE(header.length, 0);
  return new Uint8Array(gzipSync(Buffer.concat([Buffer.from(MAGIC, 'latin1'), len, header, bytes]), { level: 9 }));
}

/** Reads model.bin back; throws a plain Error if the bytes are not a dendrolog model file. */
export function readModelFile(data: Uint8Array): ModelFile {
  const raw = gunzipSync(data);
  if (raw.subarray(0, 4).toString('latin1') !== MAGIC) throw new Error('not a dendrolog model file');
  const n = raw.readUInt32LE(4);
  const header = JSON.parse(raw.subarray(8, 8 + n).toString('utf8')) as Omit<ModelFile, 'bytes'>;
  return { ...header, bytes: new Uint8Array(raw.subarray(8 + n)) };
}
