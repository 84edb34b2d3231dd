import type { ColumnType } from '../../runner/recipe-types.js';

/** A typed column: numbers and dates as Float64Array (NaN for missing, dates as ms since epoch), text as strings. */
export type ColumnValues = Float64Array | (string | null)[];

const NUMBER = /^[+-]?(\d+\.?\d*|\.\d+)([eE][+-]?\d+)?$/;
const DATE = /^(\d{4})-(\d{2})-(\d{2})(?:[T ](\d{2}):(\d{2})(?::(\d{2})(?:\.(\d+))?)?(Z|[+-]\d{2}:?\d{2})?)?$/;

/**
 * Parses one text value as its declared type. Returns `null` for missing, `undefined` when it does not parse.
 *
 * Example: `parseValue(' 3.5 ', 'number', new Set()) === 3.5`; `parseValue('00152', 'string', new Set()) === '00152'`.
 */
export function parseValue(raw: string, type: ColumnType, missing: Set<string>): number | string | null | undefined {
  if (missing.has(raw)) return null;
  const t = raw.trim();
  if (missing.has(t)) return null;
  switch (type) {
    case 'number': {
      if (!NUMBER.test(t)) return undefined;
      const v = Number(t);
      // a numeric missing token such as -9999 also matches "-9999.0"
      if (missing.has(String(v))) return null;
      return v;
    }
    case 'date': {
      const m = DATE.exec(t);
      if (!m) return undefined;
      const ms = Date.parse(m[4] ? (m[8] ? t.replace(' ', 'T') : t.replace(' ', 'T') + 'Z') : `${t}T00:00:00Z`);
      if (Number.isNaN(ms)) return undefined;
      // reject calendar overflow such as 2021-02-30, which Date.parse rolls forward
      const d = new Date(ms);
      if (!m[8] && (d.getUTCMonth() + 1 !== Number(m[2]) || d.getUTCDate() !== Number(m[3]))) return undefined;
      return ms;
    }
    case 'string':
    case 'category':
      return raw;
  }
}

/** What a type is called in messages. */
export function typeLabel(type: ColumnType): string {
  return type === 'date' ? 'date (YYYY-MM-DD)' : type;
}
