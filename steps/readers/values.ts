import type { ColumnType, DateFormat } from '../../core/recipe-types.js';
import { table } from '../../core/dict.js';

/** A typed column: numbers and dates as Float64Array (NaN for missing, dates as ms since epoch), text as strings. */
export type { ColumnValues } from '../../core/frame.js';

/** How text values are read: the decimal mark of numbers and the layout of dates. */
export interface ValueOptions {
  decimal: '.' | ',';
  dateFormat: DateFormat;
}

/** The date layouts a source may declare; `YYYY-MM-DD` also takes ISO 8601 times, as it always has. */
export const DATE_FORMATS = ['YYYY-MM-DD', 'DD/MM/YYYY', 'MM/DD/YYYY', 'DD.MM.YYYY', 'YYYY-MM-DD HH:mm', 'DD/MM/YYYY HH:mm'] as const;

export const DEFAULT_VALUE_OPTIONS: ValueOptions = { decimal: '.', dateFormat: 'YYYY-MM-DD' };

const NUMBER = /^[+-]?(\d+\.?\d*|\.\d+)([eE][+-]?\d+)?$/;
const NUMBER_COMMA = /^[+-]?(\d+,?\d*|,\d+)([eE][+-]?\d+)?$/;
const DATE = /^(\d{4})-(\d{2})-(\d{2})(?:[T ](\d{2}):(\d{2})(?::(\d{2})(?:\.(\d+))?)?(Z|[+-]\d{2}:?\d{2})?)?$/;
/** Day-month-year layouts: groups are the date parts in the order the format names them, then hour and minute. */
const LAYOUTS: Record<Exclude<DateFormat, 'YYYY-MM-DD'>, { re: RegExp; order: ['y' | 'm' | 'd', 'y' | 'm' | 'd', 'y' | 'm' | 'd']; time: boolean }> = table({
  'DD/MM/YYYY': { re: /^(\d{1,2})\/(\d{1,2})\/(\d{4})$/, order: ['d', 'm', 'y'], time: false },
  'MM/DD/YYYY': { re: /^(\d{1,2})\/(\d{1,2})\/(\d{4})$/, order: ['m', 'd', 'y'], time: false },
  'DD.MM.YYYY': { re: /^(\d{1,2})\.(\d{1,2})\.(\d{4})$/, order: ['d', 'm', 'y'], time: false },
  'YYYY-MM-DD HH:mm': { re: /^(\d{4})-(\d{2})-(\d{2})[T ](\d{2}):(\d{2})$/, order: ['y', 'm', 'd'], time: true },
  'DD/MM/YYYY HH:mm': { re: /^(\d{1,2})\/(\d{1,2})\/(\d{4}) (\d{2}):(\d{2})$/, order: ['d', 'm', 'y'], time: true },
});

/**
 * Parses one text value as its declared type. Returns `null` for missing, `undefined` when it does not parse.
 * Nothing is guessed: a value is read only as the type its column declares.
 *
 * Example: `parseValue(' 3.5 ', 'number', new Set()) === 3.5`; `parseValue('00152', 'string', new Set()) === '00152'`;
 * `parseValue('3,5', 'number', new Set(), {decimal: ',', dateFormat: 'YYYY-MM-DD'}) === 3.5`.
 */
export function parseValue(
  raw: string,
  type: ColumnType,
  missing: Set<string>,
  opts: ValueOptions = DEFAULT_VALUE_OPTIONS,
): number | string | null | undefined {
  if (missing.has(raw)) return null;
  const t = raw.trim();
  if (missing.has(t)) return null;
  switch (type) {
    case 'number': {
      let v: number;
      if (opts.decimal === ',') {
        if (!NUMBER_COMMA.test(t)) return undefined;
        v = Number(t.replace(',', '.'));
      } else {
        if (!NUMBER.test(t)) return undefined;
        v = Number(t);
      }
      // a literal beyond ±1.8e308 (such as 1e309) reads as Infinity: refused, as the text "Infinity" is
      if (!Number.isFinite(v)) return undefined;
      // a numeric missing token such as -9999 also matches "-9999.0"
      const numeric = numericTokens(missing);
      if (numeric.size > 0 && numeric.has(v)) return null;
      return v;
    }
    case 'date':
      return parseDate(t, opts.dateFormat);
    case 'string':
    case 'category':
      return raw;
  }
}

/**
 * Whether a value a reader could not take is a number too large for a 64-bit float: a numeric
 * literal such as "1e309" (either decimal mark), or an infinite number from a JSON or binary file.
 * Readers use it to say "out of range" rather than "not a number".
 *
 * Example: `overflowsFloat('1e309') === true`; `overflowsFloat('1,5e400', ',') === true`; `overflowsFloat('abc') === false`.
 */
export function overflowsFloat(raw: unknown, decimal: '.' | ',' = '.'): boolean {
  if (typeof raw === 'number') return raw === Infinity || raw === -Infinity;
  if (typeof raw !== 'string') return false;
  const t = raw.trim();
  if (decimal === ',') return NUMBER_COMMA.test(t) && !Number.isFinite(Number(t.replace(',', '.')));
  return NUMBER.test(t) && !Number.isFinite(Number(t));
}

const NUMERIC_TOKENS = new WeakMap<Set<string>, Set<number>>();

/** The missing tokens that are numbers, as numbers; worked out once per token set (this runs per value). */
function numericTokens(missing: Set<string>): Set<number> {
  let out = NUMERIC_TOKENS.get(missing);
  if (!out) {
    out = new Set([...missing].map((t) => t.trim()).filter((t) => NUMBER.test(t)).map(Number));
    NUMERIC_TOKENS.set(missing, out);
  }
  return out;
}

/**
 * A date in the given layout as ms since the epoch (UTC), or `undefined` when it does not match or
 * names a day that does not exist.
 *
 * Example: `parseDate('03/06/2021', 'DD/MM/YYYY') === Date.UTC(2021, 5, 3)`.
 */
export function parseDate(t: string, format: DateFormat): number | undefined {
  if (format === 'YYYY-MM-DD') {
    const m = DATE.exec(t);
    if (!m) return undefined;
    // Date.parse rolls 2020-02-30 forward to March and 24:00 to the next day, with or without a
    // zone, so every field is checked against the calendar before it is trusted
    if (!dayExists(Number(m[1]), Number(m[2]), Number(m[3]))) return undefined;
    if (m[4] && (Number(m[4]) > 23 || Number(m[5]) > 59 || (m[6] !== undefined && Number(m[6]) > 59))) return undefined;
    if (m[8] && m[8] !== 'Z' && (Number(m[8].slice(1, 3)) > 23 || Number(m[8].slice(-2)) > 59)) return undefined;
    const ms = Date.parse(m[4] ? (m[8] ? t.replace(' ', 'T') : t.replace(' ', 'T') + 'Z') : `${t}T00:00:00Z`);
    if (Number.isNaN(ms)) return undefined;
    return ms;
  }
  const layout = LAYOUTS[format];
  const m = layout.re.exec(t);
  if (!m) return undefined;
  const part = { y: 0, m: 0, d: 0 };
  layout.order.forEach((p, i) => (part[p] = Number(m[i + 1])));
  const hour = layout.time ? Number(m[4]) : 0;
  const minute = layout.time ? Number(m[5]) : 0;
  if (hour > 23 || minute > 59) return undefined;
  const ms = Date.UTC(part.y, part.m - 1, part.d, hour, minute);
  const d = new Date(ms);
  if (d.getUTCFullYear() !== part.y || d.getUTCMonth() + 1 !== part.m || d.getUTCDate() !== part.d) return undefined;
  return ms;
}

/** Whether a day exists in the proleptic Gregorian calendar (month 1–12; no rolling over). */
function dayExists(year: number, month: number, day: number): boolean {
  if (month < 1 || month > 12 || day < 1) return false;
  const leap = year % 4 === 0 && (year % 100 !== 0 || year % 400 === 0);
  const days = [31, leap ? 29 : 28, 31, 30, 31, 30, 31, 31, 30, 31, 30, 31][month - 1];
  return day <= days;
}

/** What a type is called in messages. */
export function typeLabel(type: ColumnType, dateFormat: DateFormat = 'YYYY-MM-DD', decimal: '.' | ',' = '.'): string {
  if (type === 'date') return `date (${dateFormat})`;
  if (type === 'number' && decimal === ',') return 'number (with a decimal comma)';
  return type;
}
