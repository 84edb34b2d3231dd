import type { Column } from '../../core/frame.js';
import type { ColumnType, CoordinateRange, DateFormat } from '../../core/recipe-types.js';
import { parseValue, type ValueOptions } from './values.js';

/** What every reader is asked: the file, the declared columns and how to read values. */
export interface ReadRequest {
  path: string;
  /** The path as messages show it. */
  display: string;
  columns: Record<string, ColumnType>;
  missing: string[];
  undeclared: 'ignore' | 'error' | 'text';
  dateFormat: DateFormat;
  /** Text formats (csv, tsv, json): the encoding's label, decoded strictly; utf-8 unless the source declares another. */
  encoding: string;
  /** Delimited text only. */
  delimiter: string;
  decimal: '.' | ',';
  header: boolean;
  /** Bytes read at a time by the streaming text reader (tests make it tiny). */
  chunkBytes?: number;
  /** NetCDF only: the variables to read; null means the declared columns that are not dimensions. */
  variables: string[] | null;
  select: Record<string, CoordinateRange>;
  progress?: (fraction: number) => void;
  /** Read at most this many data rows (check reads the first rows only); readers of columnar formats may read all. */
  maxRows?: number;
}

/** What a reader hands back: typed columns, plus what the step notes need. */
export interface ReadResult {
  columns: Column[];
  rows: number;
  /** Every column (or variable) name the file holds. */
  fileColumns: string[];
  /** File columns the recipe does not declare (ignored, or read as text). */
  undeclared: string[];
  /** Units of columns that carry them (NetCDF variables and coordinates). */
  units?: Record<string, string>;
  /** Extra words for the step's detail line. */
  detail?: string;
}

export type Reader = (req: ReadRequest) => ReadResult | Promise<ReadResult>;

/**
 * A growing Float64Array. `reserve` sizes it once the row count can be estimated, so a large file
 * is not copied at every doubling; `finish` returns a view of exactly `length` values and copies only
 * when much of the space went unused.
 *
 * Example: `const b = new NumberBuilder(); b.push(1); b.finish()` is `Float64Array [1]`.
 */
export class NumberBuilder {
  private data: Float64Array;
  length = 0;
  constructor(capacity = 1024) {
    this.data = new Float64Array(capacity);
  }
  reserve(capacity: number): void {
    if (capacity > this.data.length) this.grow(capacity);
  }
  push(v: number): void {
    if (this.length === this.data.length) this.grow(Math.ceil(this.data.length * 1.5) + 16);
    this.data[this.length++] = v;
  }
  finish(): Float64Array {
    if (this.length === this.data.length) return this.data;
    // a view keeps the spare tail alive; worth it only while the tail is small
    if (this.data.length - this.length <= this.data.length / 8) return this.data.subarray(0, this.length);
    return this.data.slice(0, this.length);
  }
  private grow(capacity: number): void {
    const next = new Float64Array(capacity);
    next.set(this.data.subarray(0, this.length));
    this.data = next;
  }
}

/**
 * A copy of a string that shares no memory with the chunk it was cut from (V8 keeps a sliced string's
 * whole parent alive, which would keep every chunk of a large file in memory).
 */
export function detach(s: string): string {
  return s.length < 13 ? s : (' ' + s).slice(1);
}

/** Text values, with category values interned so a million rows of "forest" share one string. */
export class TextBuilder {
  readonly values: (string | null)[] = [];
  private readonly pool: Map<string, string> | null;
  constructor(intern: boolean) {
    this.pool = intern ? new Map() : null;
  }
  push(v: string | null): void {
    if (v === null) {
      this.values.push(null);
      return;
    }
    if (this.pool) {
      let s = this.pool.get(v);
      if (s === undefined) {
        s = detach(v);
        this.pool.set(s, s);
      }
      this.values.push(s);
    } else this.values.push(detach(v));
  }
}

/** Builds one typed column from values pushed in row order. */
export interface ColumnSink {
  name: string;
  type: ColumnType;
  /** Adds a parsed value (number, text or null for missing). */
  add(v: number | string | null): void;
  reserve(rows: number): void;
  finish(): Column;
}

/**
 * A sink for a column of the declared type.
 *
 * Example: `const s = columnSink('x', 'number'); s.add(1); s.add(null); s.finish().values` is `[1, NaN]`.
 */
export function columnSink(name: string, type: ColumnType): ColumnSink {
  if (type === 'number' || type === 'date') {
    const b = new NumberBuilder();
    return {
      name,
      type,
      add: (v) => b.push(v === null ? NaN : (v as number)),
      reserve: (n) => b.reserve(n),
      finish: () => ({ name, type, values: b.finish() }),
    };
  }
  const b = new TextBuilder(type === 'category');
  return {
    name,
    type,
    add: (v) => b.push(v as string | null),
    reserve: () => {},
    finish: () => ({ name, type, values: b.values }),
  };
}

/**
 * Converts a value a binary or JSON reader produced into the declared type: `null` for missing,
 * `undefined` when it cannot be that type. Text is parsed as CSV text would be; a number is never
 * taken as a date (milliseconds or days?), nor a boolean as a number.
 *
 * Example: `convertValue('00152', 'string', new Set(), opts) === '00152'`; `convertValue(152n, 'number', ...) === 152`.
 */
export function convertValue(v: unknown, type: ColumnType, missing: Set<string>, opts: ValueOptions): number | string | null | undefined {
  if (v === null || v === undefined) return null;
  if (typeof v === 'string') return parseValue(v, type, missing, { decimal: '.', dateFormat: opts.dateFormat });
  switch (type) {
    case 'number':
      if (typeof v === 'number' || typeof v === 'bigint') {
        const x = Number(v);
        if (Number.isNaN(x)) return null;
        // JSON's 1e309 and a binary file's infinities are numbers no metric can use: refused
        if (!Number.isFinite(x)) return undefined;
        if (missing.size > 0 && missing.has(String(x))) return null;
        return x;
      }
      return undefined;
    case 'date':
      if (v instanceof Date) return Number.isNaN(v.getTime()) ? null : v.getTime();
      return undefined;
    case 'string':
    case 'category': {
      const s = v instanceof Date ? v.toISOString() : typeof v === 'object' ? JSON.stringify(v) : String(v);
      return missing.has(s) ? null : s;
    }
  }
}

/** A short, readable rendering of a bad value for messages. */
export function showValue(v: unknown): string {
  if (typeof v === 'string') return v;
  if (typeof v === 'bigint') return v.toString();
  if (v instanceof Date) return v.toISOString();
  // JSON.stringify writes non-finite numbers as "null"
  if (typeof v === 'number' && !Number.isFinite(v)) return String(v);
  return JSON.stringify(v) ?? String(v);
}
