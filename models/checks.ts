/**
 * Input checks of the forest engine. Each failure throws an EngineInputError whose message comes from
 * `engineMessages`, naming the bad value, where it is, and the fix.
 *
 * Example: `checkMatrix({ columns: [new Float64Array([1, NaN])], names: ['x'], rows: 2 })` throws
 * "feature "x" has NaN (a missing value) at row index 1 (0-based; ...)".
 */
import { EngineInputError, engineMessages as msg } from './engine-errors.js';

/** Column-major predictors: `columns[f][row]`, one name per column. */
export interface Matrix {
  columns: Float64Array[];
  names: string[];
  rows: number;
}

/** Throws unless the matrix is well formed and every value is finite. */
export function checkMatrix(x: Matrix): void {
  if (x.columns.length !== x.names.length) throw new EngineInputError(msg.columnCount(x.columns.length, x.names.length));
  for (let f = 0; f < x.columns.length; f++) {
    const col = x.columns[f];
    if (col.length !== x.rows) throw new EngineInputError(msg.columnLength(x.names[f], col.length, x.rows));
    checkFinite(col, x.names[f]);
  }
}

/** Throws naming `name` and the first row (0-based) holding NaN or ±Infinity. */
export function checkFinite(values: Float64Array, name: string): void {
  for (let r = 0; r < values.length; r++) {
    const v = values[r];
    // v - v is 0 for finite v and NaN for NaN and ±Infinity: one test in the fast path.
    if (v - v !== 0) throw new EngineInputError(msg.nonFinite(name, r, v));
  }
}

/** `value` as an integer in [min, max]; e.g. `checkInteger('trees', 0, 1)` throws "trees must be an integer of at least 1, got 0". */
export function checkInteger(what: string, value: unknown, min: number, max?: number): number {
  if (typeof value !== 'number' || !Number.isInteger(value) || value < min || (max !== undefined && value > max)) {
    throw new EngineInputError(msg.notInteger(what, value, min, max));
  }
  return value;
}

/**
 * mtry as a count for `p` predictors: an integer 1..p is a count; a number strictly between 0 and 1
 * is a fraction of p, rounded down, at least 1. (A tiny tolerance stops 0.3 × 10 from flooring to 2
 * should the product round below 3.)
 */
export function resolveMtry(mtry: unknown, p: number): number {
  // the regression default of common practice: a third of the predictors, rounded down, at least 1
  if (mtry === null) return Math.max(1, Math.floor(p / 3));
  if (typeof mtry !== 'number' || !Number.isFinite(mtry) || mtry <= 0) throw new EngineInputError(msg.mtryInvalid(Number(mtry), p));
  if (mtry < 1) return Math.max(1, Math.floor(mtry * p + 1e-9));
  if (!Number.isInteger(mtry)) throw new EngineInputError(msg.mtryInvalid(mtry, p));
  if (mtry > p) throw new EngineInputError(msg.mtryTooLarge(mtry, p));
  return mtry;
}

/** null (unlimited) or an integer >= 1; 0 is refused rather than read as "unlimited" the way ranger reads it. */
export function checkMaxDepth(value: unknown): number | null {
  if (value === null) return null;
  if (typeof value !== 'number' || !Number.isInteger(value) || value < 1) throw new EngineInputError(msg.maxDepth(value));
  return value;
}

/** A fraction in (0, 1]; e.g. `checkSampleFraction(0.632)` returns 0.632. */
export function checkSampleFraction(value: unknown): number {
  if (typeof value !== 'number' || !(value > 0 && value <= 1)) throw new EngineInputError(msg.sampleFraction(value));
  return value;
}

/** Throws unless the target has one finite value per row; non-finite values are reported as "the target". */
export function checkTarget(y: Float64Array, rows: number): void {
  if (y.length !== rows) throw new EngineInputError(msg.targetLength(y.length, rows));
  checkFinite(y, 'target');
}
