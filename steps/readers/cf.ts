/**
 * The CF conventions a reader applies to NetCDF values: missing values (`_FillValue`,
 * `missing_value`, and netCDF's default fill values), packing (`scale_factor`, `add_offset`) and
 * time coordinates (`units: "days since 1990-01-01"`, `calendar`).
 * Reference: CF Conventions 1.11, sections 2.5.1 (missing data), 8.1 (packed data), 4.4 (time).
 */
import { table } from '../../core/dict.js';

/** NetCDF external types as the readers name them. */
export type NcType = 'byte' | 'ubyte' | 'char' | 'short' | 'ushort' | 'int' | 'uint' | 'int64' | 'uint64' | 'float' | 'double' | 'string';

/**
 * netCDF's default fill values (netcdf.h NC_FILL_*): a value equal to one is missing when the
 * variable sets no `_FillValue`. ncdump prints such values as "_" too. Bytes have none in use:
 * the netCDF guide notes every byte value may be data.
 */
const DEFAULT_FILL: Partial<Record<NcType, number>> = table({
  short: -32767,
  ushort: 65535,
  int: -2147483647,
  uint: 4294967295,
  // as the reader sees them: 64-bit integers rounded to the nearest double
  int64: Number(-9223372036854775806n),
  uint64: Number(18446744073709551614n),
  float: Math.fround(9.969209968386869e36),
  double: 9.969209968386869e36,
});

export type Attributes = Record<string, unknown>;

/** An attribute's numbers, whether stored as a scalar or an array. */
export function numbersOf(v: unknown): number[] {
  if (v === null || v === undefined) return [];
  if (typeof v === 'number' || typeof v === 'bigint') return [Number(v)];
  if (typeof v === 'string') return [];
  if (ArrayBuffer.isView(v) || Array.isArray(v)) return Array.from(v as ArrayLike<number | bigint>, (x) => Number(x));
  return [];
}

/** An attribute as text, or undefined. */
export function textOf(v: unknown): string | undefined {
  if (typeof v === 'string') return v;
  if (Array.isArray(v) && typeof v[0] === 'string') return v.join('');
  return undefined;
}

/**
 * Unpacks raw values: values equal to `_FillValue`, to one of `missing_value`, or (without a
 * `_FillValue`) to the type's default fill become NaN; the rest become raw × scale_factor + add_offset.
 *
 * Example: raw short 125 with scale_factor 0.01, add_offset 273.15 gives 274.4.
 */
export function unpack(raw: ArrayLike<number>, type: NcType, attrs: Attributes): Float64Array {
  const missing = new Set<number>(numbersOf(attrs.missing_value));
  const fill = numbersOf(attrs._FillValue);
  if (fill.length > 0) missing.add(fill[0]);
  else if (DEFAULT_FILL[type] !== undefined) missing.add(DEFAULT_FILL[type]!);
  const scale = numbersOf(attrs.scale_factor)[0] ?? 1;
  const offset = numbersOf(attrs.add_offset)[0] ?? 0;
  const out = new Float64Array(raw.length);
  const packed = scale !== 1 || offset !== 0;
  for (let i = 0; i < raw.length; i++) {
    const r = Number(raw[i]);
    if (Number.isNaN(r) || missing.has(r)) out[i] = NaN;
    else out[i] = packed ? r * scale + offset : r;
  }
  return out;
}

const UNIT_MS: Record<string, number> = table({
  day: 86_400_000,
  days: 86_400_000,
  d: 86_400_000,
  hour: 3_600_000,
  hours: 3_600_000,
  hr: 3_600_000,
  hrs: 3_600_000,
  h: 3_600_000,
  minute: 60_000,
  minutes: 60_000,
  min: 60_000,
  mins: 60_000,
  second: 1000,
  seconds: 1000,
  sec: 1000,
  secs: 1000,
  s: 1000,
});

const REFERENCE =
  /^(-?\d{1,4})-(\d{1,2})-(\d{1,2})(?:(?:T|\s+)(\d{1,2}):(\d{1,2})(?::(\d{1,2}(?:\.\d*)?))?)?\s*(Z|UTC|GMT|[+-]\d{1,2}(?::?\d{2})?)?$/i;

/** Dates before this are Julian in the standard (mixed) calendar. */
const GREGORIAN_START = Date.UTC(1582, 9, 15);

export type TimeDecoder = { ok: true; decode: (v: number) => number } | { ok: false; reason: 'units' | 'calendar'; why: string };

/**
 * A decoder from CF time values to ms since 1970 (UTC), or why there is none.
 *
 * Example: `timeDecoder('hours since 1990-01-01 06:00', undefined)` decodes 18 as 1990-01-02T00:00Z.
 */
export function timeDecoder(units: string | undefined, calendar: string | undefined): TimeDecoder {
  if (!units) return { ok: false, reason: 'units', why: 'the variable has no units attribute' };
  const m = /^\s*([A-Za-z]+)\s+since\s+(.+?)\s*$/i.exec(units);
  if (!m) return { ok: false, reason: 'units', why: 'they do not have the form "<unit> since <date>"' };
  const unit = m[1].toLowerCase();
  if (['month', 'months', 'year', 'years', 'common_year', 'common_years'].includes(unit)) {
    return { ok: false, reason: 'units', why: `"${m[1]}" has no fixed length in CF (a UDUNITS year is 365.242198781 days), so it does not give calendar dates` };
  }
  const ms = UNIT_MS[unit];
  if (ms === undefined) return { ok: false, reason: 'units', why: `"${m[1]}" is not a time unit dendrolog knows` };
  const r = REFERENCE.exec(m[2]);
  if (!r) return { ok: false, reason: 'units', why: `the reference date "${m[2]}" is not a date` };
  const [y, mo, d] = [Number(r[1]), Number(r[2]), Number(r[3])];
  const secs = r[6] ? Number(r[6]) : 0;
  let epoch = Date.UTC(2000, mo - 1, d, r[4] ? Number(r[4]) : 0, r[5] ? Number(r[5]) : 0, Math.floor(secs), Math.round((secs % 1) * 1000));
  // Date.UTC maps years 0-99 to 1900-1999; start from a leap year and set the year itself
  const at = new Date(epoch);
  at.setUTCFullYear(y);
  epoch = at.getTime();
  const check = new Date(epoch);
  if (check.getUTCMonth() + 1 !== mo || check.getUTCDate() !== d) return { ok: false, reason: 'units', why: `the reference date "${m[2]}" does not exist` };
  const zone = r[7]?.toUpperCase();
  if (zone && zone !== 'Z' && zone !== 'UTC' && zone !== 'GMT') {
    const z = /^([+-])(\d{1,2}):?(\d{2})?$/.exec(zone)!;
    const minutes = Number(z[2]) * 60 + Number(z[3] ?? 0);
    epoch -= (z[1] === '-' ? -1 : 1) * minutes * 60_000;
  }
  const cal = (calendar ?? 'standard').toLowerCase();
  if (!['standard', 'gregorian', 'proleptic_gregorian'].includes(cal)) {
    return { ok: false, reason: 'calendar', why: calendar ?? '' };
  }
  const mixed = cal !== 'proleptic_gregorian';
  if (mixed && epoch < GREGORIAN_START) {
    return { ok: false, reason: 'units', why: `the reference date is before 1582-10-15, where the ${cal} calendar is Julian; dendrolog decodes only Gregorian dates` };
  }
  return {
    ok: true,
    decode: (v) => {
      const t = Math.round(epoch + v * ms);
      return mixed && t < GREGORIAN_START ? NaN : t;
    },
  };
}
