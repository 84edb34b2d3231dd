/**
 * The `mean` baseline: predicts the training mean for every row. Any model worth reporting
 * should beat it, and its training R² is 0 by construction, which anchors the R² scale.
 */

/** Thrown for unusable input to the mean baseline or a corrupt serialized model. */
export class MeanModelError extends Error {
  override readonly name = 'MeanModelError';
}

export interface MeanModel {
  kind: 'mean';
  value: number;
}

/**
 * Arithmetic mean with a second corrective pass, so large offsets (years, populations)
 * do not cost digits the way a single running sum does. Callers must pass finite values.
 *
 * Example: `meanOf(new Float64Array([1, 2, 6])) === 3`
 */
export function meanOf(values: ArrayLike<number>): number {
  const n = values.length;
  let sum = 0;
  for (let i = 0; i < n; i++) sum += values[i];
  const first = sum / n;
  // The residual sum is small, so its rounding error is small too; adding it back
  // recovers most of what the first pass lost.
  let correction = 0;
  for (let i = 0; i < n; i++) correction += values[i] - first;
  return first + correction / n;
}

/**
 * Fits the mean baseline. Refuses empty or non-finite input rather than returning NaN,
 * because a NaN baseline would silently poison every comparison made against it.
 *
 * Example: `fitMean(new Float64Array([1, 2, 6]))` → `{ kind: 'mean', value: 3 }`
 */
export function fitMean(y: Float64Array): MeanModel {
  if (y.length === 0) throw new MeanModelError('cannot fit the mean baseline to zero rows');
  for (let i = 0; i < y.length; i++) {
    if (!Number.isFinite(y[i])) {
      throw new MeanModelError(
        `the response has ${String(y[i])} at row ${i} (rows counted from 0); remove or impute it before fitting`,
      );
    }
  }
  return { kind: 'mean', value: meanOf(y) };
}

/**
 * Predicts the fitted mean for `rows` rows.
 *
 * Example: `predictMean({ kind: 'mean', value: 3 }, 2)` → `Float64Array [3, 3]`
 */
export function predictMean(m: MeanModel, rows: number): Float64Array {
  if (!Number.isInteger(rows) || rows < 0) {
    throw new MeanModelError(`row count must be a non-negative integer, got ${rows}`);
  }
  return new Float64Array(rows).fill(m.value);
}

// Layout (little-endian): 4-byte magic "DMEA", uint8 format version, float64 value.
const MAGIC = [0x44, 0x4d, 0x45, 0x41];
const VERSION = 1;
const BYTES = 4 + 1 + 8;

/**
 * Serializes to a fixed 13-byte layout; the float is stored raw so the round trip is
 * bit-identical (no decimal formatting).
 *
 * Example: `deserializeMean(serializeMean(m)).value === m.value`
 */
export function serializeMean(m: MeanModel): Uint8Array {
  const bytes = new Uint8Array(BYTES);
  bytes.set(MAGIC, 0);
  const view = new DataView(bytes.buffer);
  view.setUint8(4, VERSION);
  view.setFloat64(5, m.value, true);
  return bytes;
}

/**
 * Inverse of `serializeMean`; rejects anything that is not exactly that layout.
 *
 * Example: `deserializeMean(serializeMean({ kind: 'mean', value: 2 }))` → `{ kind: 'mean', value: 2 }`
 */
export function deserializeMean(b: Uint8Array): MeanModel {
  if (b.length !== BYTES || MAGIC.some((v, i) => b[i] !== v)) {
    throw new MeanModelError(`not a serialized mean model (expected ${BYTES} bytes starting with "DMEA")`);
  }
  const view = new DataView(b.buffer, b.byteOffset, b.byteLength);
  const version = view.getUint8(4);
  if (version !== VERSION) {
    throw new MeanModelError(`serialized mean model has format version ${version}; this build reads version ${VERSION}`);
  }
  return { kind: 'mean', value: view.getFloat64(5, true) };
}
