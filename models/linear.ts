/**
 * The `linear` baseline: ordinary least squares with an intercept.
 *
 * Solved by Householder QR on centred, unit-norm columns rather than the normal equations,
 * because the normal equations square the condition number and lose about half the digits
 * on ill-conditioned data such as NIST's Longley set; centring removes the near-collinearity
 * between each predictor and the intercept, which is most of Longley's difficulty.
 */
import { meanOf } from './mean.js';

import type { Matrix } from './checks.js';

export type { Matrix };

export interface LinearModel {
  kind: 'linear';
  names: string[];
  intercept: number;
  coefficients: Float64Array;
  /**
   * Predictors left out because each is a linear combination of earlier ones (with
   * `dropCollinear`), with the predictors it combines; not serialized.
   */
  collinear?: Collinearity[];
}

/** One predictor that is (to the tolerance) a linear combination of the earlier predictors named. */
export interface Collinearity {
  name: string;
  with: string[];
}

export interface FitLinearOptions {
  /**
   * Leave out each predictor that is a linear combination of earlier ones, keeping the user's
   * order, instead of throwing. The fitted values are the same either way (the columns span the
   * same space); only the split of coefficients among the collinear predictors is not defined.
   */
  dropCollinear?: boolean;
}

/**
 * Thrown for input the linear model cannot fit or predict from, and for corrupt serialized
 * models. `predictors` lists the predictor names the problem is about, when there are any.
 */
export class LinearModelError extends Error {
  override readonly name = 'LinearModelError';
  readonly predictors: readonly string[];
  constructor(message: string, predictors: readonly string[] = []) {
    super(message);
    this.predictors = predictors;
  }
}

// A predictor whose part not explained by the intercept and the earlier predictors is below
// this fraction of its size is treated as collinear. It is the tolerance R's lm() uses.
const COLLINEAR_TOL = 1e-7;

// Norm without overflow or underflow for very large or tiny values.
function norm2(a: Float64Array, from = 0): number {
  let max = 0;
  for (let i = from; i < a.length; i++) max = Math.max(max, Math.abs(a[i]));
  if (max === 0) return 0;
  let s = 0;
  for (let i = from; i < a.length; i++) {
    const t = a[i] / max;
    s += t * t;
  }
  return max * Math.sqrt(s);
}

function quote(names: readonly string[]): string {
  return names.map((n) => `'${n}'`).join(', ');
}

function checkShape(x: Matrix, who: string): void {
  if (!Number.isInteger(x.rows) || x.rows < 0) {
    throw new LinearModelError(`${who}: the row count must be a non-negative integer, got ${x.rows}`);
  }
  if (x.columns.length !== x.names.length) {
    throw new LinearModelError(`${who}: ${x.columns.length} columns but ${x.names.length} names`);
  }
  const seen = new Set<string>();
  for (let j = 0; j < x.names.length; j++) {
    const name = x.names[j];
    if (seen.has(name)) throw new LinearModelError(`${who}: predictor name '${name}' appears twice`, [name]);
    seen.add(name);
    if (x.columns[j].length !== x.rows) {
      throw new LinearModelError(
        `${who}: column '${name}' has ${x.columns[j].length} values but the matrix has ${x.rows} rows`,
        [name],
      );
    }
  }
}

function firstNonFinite(a: Float64Array): number {
  for (let i = 0; i < a.length; i++) if (!Number.isFinite(a[i])) return i;
  return -1;
}

/**
 * One Householder reflection, kept as v and tau with H = I - tau v vᵀ acting on rows
 * `at`..n-1. Stored so the same Qᵀ can be applied again for iterative refinement.
 */
interface Reflection {
  at: number;
  v: Float64Array;
  tau: number;
}

function reflect(h: Reflection, c: Float64Array): void {
  const { at, v, tau } = h;
  let s = 0;
  for (let i = 0; i < v.length; i++) s += v[i] * c[at + i];
  s *= tau;
  for (let i = 0; i < v.length; i++) c[at + i] -= s * v[i];
}

/** Solves the upper-triangular system R b = c (first r entries of c). */
function backSolve(r: Float64Array[], c: ArrayLike<number>, size: number): Float64Array {
  const b = new Float64Array(size);
  for (let q = size - 1; q >= 0; q--) {
    let s = c[q];
    for (let k = q + 1; k < size; k++) s -= r[k][q] * b[k];
    b[q] = s / r[q][q];
  }
  return b;
}

/**
 * Fits y = intercept + Σ coefficients[j] · x.columns[j] by least squares.
 *
 * Throws `LinearModelError` on NaN or ±Infinity (naming the column and the first bad row,
 * counted from 0), on fewer rows than predictors + 1, and on collinear predictors (naming
 * them; with `dropCollinear` they are left out and listed in `collinear` instead), because in
 * each case there is no single well-defined answer to return.
 *
 * Example:
 * ```ts
 * const x = { names: ['t'], rows: 3, columns: [new Float64Array([0, 1, 2])] };
 * fitLinear(x, new Float64Array([1, 3, 5])); // intercept 1, coefficients [2]
 * ```
 */
export function fitLinear(x: Matrix, y: Float64Array, opts: FitLinearOptions = {}): LinearModel {
  checkShape(x, 'fitLinear');
  const n = x.rows;
  const p = x.columns.length;
  if (y.length !== n) throw new LinearModelError(`fitLinear: the response has ${y.length} values but the matrix has ${n} rows`);
  const badY = firstNonFinite(y);
  if (badY >= 0) {
    throw new LinearModelError(
      `fitLinear: the response has ${String(y[badY])} at row ${badY} (rows counted from 0); remove or impute it before fitting`,
    );
  }
  for (let j = 0; j < p; j++) {
    const bad = firstNonFinite(x.columns[j]);
    if (bad >= 0) {
      throw new LinearModelError(
        `fitLinear: predictor '${x.names[j]}' has ${String(x.columns[j][bad])} at row ${bad} (rows counted from 0); remove or impute it before fitting`,
        [x.names[j]],
      );
    }
  }
  if (n < p + 1) {
    throw new LinearModelError(
      `fitLinear: ${n} rows cannot determine an intercept and ${p} coefficients; need at least ${p + 1} rows, or fewer predictors`,
    );
  }

  // Centre and scale. Centring is what makes the intercept column orthogonal to the rest,
  // and unit norms make the collinearity tolerance mean the same thing for every column.
  const centres = new Float64Array(p);
  const scales = new Float64Array(p);
  const a: Float64Array[] = [];
  const constant: string[] = [];
  for (let j = 0; j < p; j++) {
    const col = x.columns[j];
    const c = meanOf(col);
    const aj = new Float64Array(n);
    for (let i = 0; i < n; i++) aj[i] = col[i] - c;
    const s = norm2(aj);
    if (s <= COLLINEAR_TOL * norm2(col)) constant.push(x.names[j]);
    centres[j] = c;
    scales[j] = s;
    if (s > 0) for (let i = 0; i < n; i++) aj[i] /= s;
    a.push(aj);
  }
  if (constant.length > 0 && opts.dropCollinear) {
    const keep = x.names.flatMap((name, j) => (constant.includes(name) ? [] : [j]));
    const reduced = fitLinear({ names: keep.map((j) => x.names[j]), rows: n, columns: keep.map((j) => x.columns[j]) }, y, opts);
    // an empty `with`: collinear with the intercept alone
    return { ...reduced, collinear: [...constant.map((name) => ({ name, with: [] })), ...(reduced.collinear ?? [])] };
  }
  if (constant.length > 0) {
    throw new LinearModelError(
      `fitLinear: ${constant.length === 1 ? 'predictor' : 'predictors'} ${quote(constant)} ${constant.length === 1 ? 'is' : 'are'} constant (or nearly so for ${constant.length === 1 ? 'its' : 'their'} size), so collinear with the intercept; drop ${constant.length === 1 ? 'it' : 'them'} and fit again`,
      constant,
    );
  }
  const original = a.map((col) => col.slice());

  const yMean = meanOf(y);
  const yc = new Float64Array(n);
  for (let i = 0; i < n; i++) yc[i] = y[i] - yMean;
  const yScale = norm2(yc) || 1;
  for (let i = 0; i < n; i++) yc[i] /= yScale;
  const yOriginal = yc.slice();

  // Householder QR, left to right, with no pivoting: a column whose remaining norm falls
  // below the tolerance is a combination of earlier ones. Keeping the order keeps the
  // error message in the user's column order.
  const reflections: Reflection[] = [];
  const r: Float64Array[] = []; // r[q] = column q of R (rows 0..q)
  const collinear: Collinearity[] = [];
  const accepted: number[] = [];
  for (let j = 0; j < p; j++) {
    const col = a[j];
    const at = accepted.length;
    const norm = norm2(col, at);
    if (norm <= COLLINEAR_TOL) {
      // The top entries are R11 z for the combination z of accepted columns this column
      // (nearly) equals; solving for z tells us which predictors it depends on.
      const z = backSolve(r, col, at);
      let zMax = 0;
      for (let q = 0; q < at; q++) zMax = Math.max(zMax, Math.abs(z[q]));
      const partners: string[] = [];
      for (let q = 0; q < at; q++) if (Math.abs(z[q]) > 1e-8 * zMax) partners.push(x.names[accepted[q]]);
      collinear.push({ name: x.names[j], with: partners });
      continue;
    }
    const x0 = col[at];
    const alpha = x0 >= 0 ? -norm : norm;
    const v = col.slice(at);
    v[0] -= alpha;
    // vᵀv = 2·norm·(norm + |x0|); computing it this way avoids cancellation.
    const h: Reflection = { at, v, tau: 1 / (norm * (norm + Math.abs(x0))) };
    reflections.push(h);
    const rq = new Float64Array(at + 1);
    for (let i = 0; i < at; i++) rq[i] = col[i];
    rq[at] = alpha;
    r.push(rq);
    accepted.push(j);
    for (let k = j + 1; k < p; k++) reflect(h, a[k]);
  }
  if (collinear.length > 0 && opts.dropCollinear) {
    const kept = accepted.map((j) => x.names[j]);
    const reduced = fitLinear({ names: kept, rows: n, columns: accepted.map((j) => x.columns[j]) }, y);
    return { ...reduced, collinear };
  }
  if (collinear.length > 0) {
    const names = new Set<string>();
    const parts = collinear.map(({ name, with: w }) => {
      names.add(name);
      for (const m of w) names.add(m);
      return `'${name}' is a linear combination of ${quote(w)}`;
    });
    const involved = [...names];
    throw new LinearModelError(
      `fitLinear: collinear predictors: ${parts.join('; ')}. Drop one predictor from each such group (for example ${quote(collinear.map((c) => c.name))}) and fit again`,
      involved,
    );
  }

  const solve = (rhs: Float64Array): Float64Array => {
    const c = rhs.slice();
    for (const h of reflections) reflect(h, c);
    return backSolve(r, c, p);
  };
  const b = solve(yc);
  // One step of iterative refinement: re-solve for the residual of the first solution
  // against the untouched columns, which mops up rounding from applying Qᵀ.
  const resid = yOriginal.slice();
  for (let j = 0; j < p; j++) {
    const col = original[j];
    const bj = b[j];
    for (let i = 0; i < n; i++) resid[i] -= bj * col[i];
  }
  const delta = solve(resid);
  for (let j = 0; j < p; j++) b[j] += delta[j];

  const coefficients = new Float64Array(p);
  let intercept = yMean;
  for (let j = 0; j < p; j++) {
    coefficients[j] = (b[j] * yScale) / scales[j];
    intercept -= coefficients[j] * centres[j];
  }
  return { kind: 'linear', names: x.names.slice(), intercept, coefficients };
}

/**
 * Predicts from a fitted model. The predictor names must equal the model's, in the same
 * order, so a reordered or renamed table fails loudly instead of predicting nonsense.
 *
 * Example: `predictLinear(model, { names: ['t'], rows: 1, columns: [new Float64Array([3])] })` → `[7]`
 */
export function predictLinear(m: LinearModel, x: Matrix): Float64Array {
  checkShape(x, 'predictLinear');
  const same = x.names.length === m.names.length && x.names.every((name, j) => name === m.names[j]);
  if (!same) {
    const missing = m.names.filter((name) => !x.names.includes(name));
    const extra = x.names.filter((name) => !m.names.includes(name));
    const detail =
      missing.length === 0 && extra.length === 0
        ? `the same names in a different order; expected ${quote(m.names)}`
        : [missing.length > 0 ? `missing ${quote(missing)}` : '', extra.length > 0 ? `not in the model ${quote(extra)}` : '']
            .filter((s) => s !== '')
            .join('; ');
    throw new LinearModelError(`predictLinear: predictors do not match the model: ${detail}`, [...missing, ...extra]);
  }
  const out = new Float64Array(x.rows).fill(m.intercept);
  for (let j = 0; j < m.coefficients.length; j++) {
    const col = x.columns[j];
    const bj = m.coefficients[j];
    for (let i = 0; i < x.rows; i++) out[i] += bj * col[i];
  }
  return out;
}

// Layout (little-endian): magic "DLIN", uint8 format version, uint32 predictor count p,
// float64 intercept, p float64 coefficients, then p names as uint32 byte length + UTF-8.
// Raw float64s, not decimal text, so a round trip is bit-identical.
const MAGIC = [0x44, 0x4c, 0x49, 0x4e];
const VERSION = 1;

/**
 * Serializes a linear model to bytes; `deserializeLinear` restores it bit for bit.
 *
 * Example: `deserializeLinear(serializeLinear(m)).intercept === m.intercept`
 */
export function serializeLinear(m: LinearModel): Uint8Array {
  const p = m.coefficients.length;
  if (m.names.length !== p) {
    throw new LinearModelError(`serializeLinear: ${p} coefficients but ${m.names.length} names`);
  }
  const encoder = new TextEncoder();
  const encoded = m.names.map((name) => encoder.encode(name));
  const size = 4 + 1 + 4 + 8 + 8 * p + encoded.reduce((s, e) => s + 4 + e.length, 0);
  const bytes = new Uint8Array(size);
  const view = new DataView(bytes.buffer);
  bytes.set(MAGIC, 0);
  view.setUint8(4, VERSION);
  view.setUint32(5, p, true);
  view.setFloat64(9, m.intercept, true);
  let at = 17;
  for (let j = 0; j < p; j++, at += 8) view.setFloat64(at, m.coefficients[j], true);
  for (const e of encoded) {
    view.setUint32(at, e.length, true);
    bytes.set(e, at + 4);
    at += 4 + e.length;
  }
  return bytes;
}

/**
 * Inverse of `serializeLinear`. Rejects truncated, padded or foreign bytes with a
 * `LinearModelError` rather than returning a half-read model.
 *
 * Example: `deserializeLinear(serializeLinear(m))` deep-equals `m`
 */
export function deserializeLinear(b: Uint8Array): LinearModel {
  const fail = (why: string): never => {
    throw new LinearModelError(`deserializeLinear: not a valid serialized linear model: ${why}`);
  };
  if (b.length < 17 || MAGIC.some((v, i) => b[i] !== v)) fail('it does not start with the "DLIN" header');
  const view = new DataView(b.buffer, b.byteOffset, b.byteLength);
  const version = view.getUint8(4);
  if (version !== VERSION) fail(`format version ${version}; this build reads version ${VERSION}`);
  const p = view.getUint32(5, true);
  if (17 + 8 * p > b.length) fail(`it is too short for ${p} coefficients`);
  const intercept = view.getFloat64(9, true);
  const coefficients = new Float64Array(p);
  let at = 17;
  for (let j = 0; j < p; j++, at += 8) coefficients[j] = view.getFloat64(at, true);
  const decoder = new TextDecoder('utf-8', { fatal: true });
  const names: string[] = [];
  for (let j = 0; j < p; j++) {
    if (at + 4 > b.length) fail(`it ends before name ${j}`);
    const len = view.getUint32(at, true);
    if (at + 4 + len > b.length) fail(`it ends inside name ${j}`);
    try {
      names.push(decoder.decode(b.subarray(at + 4, at + 4 + len)));
    } catch {
      fail(`name ${j} is not valid UTF-8`);
    }
    at += 4 + len;
  }
  if (at !== b.length) fail(`${b.length - at} unexpected bytes after the last name`);
  return { kind: 'linear', names, intercept, coefficients };
}
