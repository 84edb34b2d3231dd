import type { ColumnType } from './recipe-types.js';
import { dict, has, parseJson } from './dict.js';

/** A column's values: numbers and dates as Float64Array (NaN missing), text as strings (null missing). */
export type ColumnValues = Float64Array | (string | null)[];

/** A named, typed column. Numbers and dates: Float64Array with NaN for missing (dates in ms since epoch). */
export interface Column {
  name: string;
  type: ColumnType;
  values: ColumnValues;
}

/** The table that flows between steps: typed columns of equal length. */
export interface Frame {
  rows: number;
  columns: Column[];
}

/** Whether a column stores numbers (number and date columns). */
export function isNumeric(c: Column): c is Column & { values: Float64Array } {
  return c.type === 'number' || c.type === 'date';
}

/** The column of a given name; throws if absent (the recipe check guarantees presence). */
export function column(frame: Frame, name: string): Column {
  const c = frame.columns.find((x) => x.name === name);
  if (!c) throw new Error(`frame has no column ${name}`);
  return c;
}

/** Whether the value at row i is missing. */
export function isMissing(c: Column, i: number): boolean {
  const v = c.values[i];
  return v === null || (typeof v === 'number' && Number.isNaN(v));
}

/**
 * Keeps the rows whose indices are listed, in that order.
 *
 * Example: `takeRows(f, [2, 0]).rows === 2`
 */
export function takeRows(frame: Frame, rows: ArrayLike<number>): Frame {
  const n = rows.length;
  return {
    rows: n,
    columns: frame.columns.map((c) => {
      if (c.values instanceof Float64Array) {
        const out = new Float64Array(n);
        for (let i = 0; i < n; i++) out[i] = c.values[rows[i]];
        return { ...c, values: out };
      }
      const src = c.values;
      const out = new Array<string | null>(n);
      for (let i = 0; i < n; i++) out[i] = src[rows[i]];
      return { ...c, values: out };
    }),
  };
}

/**
 * Column names arquero cannot hold: its tables keep columns in plain objects, where `__proto__`
 * would replace the prototype. Such a column never reaches an expression; the recipe check refuses
 * expressions that read or make one (messages.expressionReservedColumn).
 */
export const ARQUERO_UNSAFE_NAMES: ReadonlySet<string> = new Set(['__proto__']);

/**
 * Reads an arquero column back into a typed column. Numbers that are not finite become missing
 * and are counted, so a log of zero or of a missing value never slips through as -Infinity.
 */
export function columnFromValues(name: string, values: ArrayLike<unknown>): { column: Column; nonFinite: number } {
  const n = values.length;
  let numeric = true;
  let dates = true;
  for (let i = 0; i < n; i++) {
    const v = values[i];
    if (v === null || v === undefined) continue;
    if (typeof v !== 'number' && typeof v !== 'boolean') numeric = false;
    if (!(v instanceof Date)) dates = false;
  }
  let nonFinite = 0;
  if (dates && !numeric) {
    const out = new Float64Array(n);
    for (let i = 0; i < n; i++) out[i] = values[i] instanceof Date ? (values[i] as Date).getTime() : NaN;
    return { column: { name, type: 'date', values: out }, nonFinite };
  }
  if (numeric) {
    const out = new Float64Array(n);
    for (let i = 0; i < n; i++) {
      const v = values[i];
      if (v === null || v === undefined) out[i] = NaN;
      else {
        const x = Number(v);
        if (!Number.isFinite(x)) nonFinite++;
        out[i] = Number.isFinite(x) ? x : NaN;
      }
    }
    return { column: { name, type: 'number', values: out }, nonFinite };
  }
  const out = new Array<string | null>(n);
  for (let i = 0; i < n; i++) {
    const v = values[i];
    out[i] = v === null || v === undefined ? null : v instanceof Date ? v.toISOString() : String(v);
  }
  return { column: { name, type: 'string', values: out }, nonFinite };
}

const MAGIC = 0x31544c44; // "DLT1" little-endian

/**
 * Binary form of a frame for the cache: magic, header length, JSON header (names, types, text
 * columns, step notes), then 8-byte aligned Float64 columns.
 */
export function encodeFrame(frame: Frame, notes: unknown = null): Uint8Array {
  const header = {
    rows: frame.rows,
    columns: frame.columns.map((c) => ({ name: c.name, type: c.type })),
    text: dict(frame.columns.filter((c) => !(c.values instanceof Float64Array)).map((c) => [c.name, c.values])),
    notes,
  };
  const json = Buffer.from(JSON.stringify(header), 'utf8');
  const headLen = 8 + json.length;
  const pad = (8 - (headLen % 8)) % 8;
  const numeric = frame.columns.filter((c) => c.values instanceof Float64Array);
  const out = new Uint8Array(headLen + pad + numeric.length * frame.rows * 8);
  const view = new DataView(out.buffer);
  view.setUint32(0, MAGIC, true);
  view.setUint32(4, json.length, true);
  out.set(json, 8);
  let offset = headLen + pad;
  for (const c of numeric) {
    out.set(new Uint8Array((c.values as Float64Array).buffer, (c.values as Float64Array).byteOffset, frame.rows * 8), offset);
    offset += frame.rows * 8;
  }
  return out;
}

/** Inverse of encodeFrame. */
export function decodeFrame(bytes: Uint8Array): { frame: Frame; notes: unknown } {
  const view = new DataView(bytes.buffer, bytes.byteOffset, bytes.byteLength);
  if (view.getUint32(0, true) !== MAGIC) throw new Error('not a dendrolog frame');
  const jsonLen = view.getUint32(4, true);
  const header = parseJson(Buffer.from(bytes.subarray(8, 8 + jsonLen)).toString('utf8')) as {
    rows: number;
    columns: { name: string; type: ColumnType }[];
    text: Record<string, (string | null)[]>;
    notes: unknown;
  };
  if (!Number.isSafeInteger(header.rows) || header.rows < 0 || !Array.isArray(header.columns)) throw new Error('the frame header is malformed');
  const headLen = 8 + jsonLen;
  let offset = headLen + ((8 - (headLen % 8)) % 8);
  const columns: Column[] = header.columns.map((c) => {
    if (has(header.text, c.name)) {
      const values = header.text[c.name];
      if (!Array.isArray(values) || values.length !== header.rows) throw new Error(`text column ${JSON.stringify(c.name)} does not hold ${header.rows} values`);
      return { ...c, values };
    }
    const values = new Float64Array(header.rows);
    new Uint8Array(values.buffer).set(bytes.subarray(offset, offset + header.rows * 8));
    offset += header.rows * 8;
    return { ...c, values };
  });
  // a short body would otherwise leave the missing values as zeros, numbers that look real
  if (offset !== bytes.length) {
    const d = offset - bytes.length;
    throw new Error(`the frame holds ${Math.abs(d)} bytes ${d > 0 ? 'fewer' : 'more'} than its header describes`);
  }
  return { frame: { rows: header.rows, columns }, notes: header.notes };
}
