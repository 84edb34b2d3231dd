import type { Column } from '../../core/frame.js';
import { DendrologError, messages } from '../../core/messages.js';
import type { ColumnType } from '../../core/recipe-types.js';
import { closest } from '../../core/suggest.js';
import { textOf, timeDecoder, unpack } from './cf.js';
import type { ReadRequest, ReadResult } from './columns.js';
import { openNetcdf, type NcFile, type NcVariable } from './netcdf-files.js';
import { parseDate } from './values.js';
import { dict } from '../../core/dict.js';

const NUMERIC = new Set(['byte', 'ubyte', 'short', 'ushort', 'int', 'uint', 'int64', 'uint64', 'float', 'double']);

/**
 * Reads gridded NetCDF variables into a long table: one row per grid point, one column per
 * dimension (its coordinate values, or 0, 1, ... where the file has no coordinate variable) and one
 * per variable. CF missing values and packing are applied; a dimension declared as `date` is decoded
 * from its CF time units. A `select` keeps inclusive ranges of coordinate values and reads only the
 * hyperslab that covers them.
 *
 * Example: with `variables: [tas]` over (time, lat, lon) of sizes 3 × 2 × 3, the table has 18 rows
 * and columns time, lat, lon, tas.
 */
export async function readNetcdf(req: ReadRequest): Promise<ReadResult> {
  const file = await openNetcdf(req.path, req.display);
  try {
    return readOpen(file, req);
  } finally {
    file.close();
  }
}

function readOpen(file: NcFile, req: ReadRequest): ReadResult {
  const { display } = req;
  const byName = new Map(file.variables.map((v) => [v.name, v]));
  const allDims = new Set(file.variables.flatMap((v) => v.dims));
  const known = file.variables.map((v) => v.name);
  const names = req.variables ?? Object.keys(req.columns).filter((c) => !allDims.has(c));
  const vars: NcVariable[] = names.map((n) => {
    const v = byName.get(n);
    if (!v) throw new DendrologError(messages.netcdfUnknownVariable(display, n, known, closest(n, known)), 1, n);
    if (!NUMERIC.has(v.type)) throw new DendrologError(messages.netcdfNotNumeric(display, n, v.type), 1, n);
    return v;
  });
  if (vars.length === 0) throw new DendrologError(messages.netcdfUnknownVariable(display, '', known), 1);
  const dims = vars[0].dims;
  const shape = vars[0].shape;
  for (const v of vars.slice(1)) {
    if (v.dims.join('\u0000') !== dims.join('\u0000')) throw new DendrologError(messages.netcdfDimensionsDiffer(display, vars[0].name, dims, v.name, v.dims), 1);
  }
  for (const d of dims) {
    const t = req.columns[d];
    if (!t) throw new DendrologError(messages.netcdfUndeclaredDimension(display, vars[0].name, d), 1);
    if (t !== 'number' && t !== 'date') throw new DendrologError(messages.netcdfDimensionValues(display, d, t), 1, d);
  }
  for (const c of Object.keys(req.columns)) {
    if (!dims.includes(c) && !names.includes(c)) throw new DendrologError(messages.netcdfDeclaredNotRead(display, c, dims, names), 1, c);
  }
  for (const v of vars) {
    const t = req.columns[v.name];
    if (t !== 'number' && t !== 'date') throw new DendrologError(messages.netcdfDimensionValues(display, v.name, t), 1, v.name);
  }

  const units = dict<string>();
  // coordinates of every dimension, decoded to dates where declared so
  const coords = dims.map((d, i) => {
    const cv = byName.get(d);
    const hasCoordinate = cv && cv.dims.length === 1 && cv.dims[0] === d && NUMERIC.has(cv.type);
    const values = hasCoordinate ? unpack(file.read(cv, [[0, shape[i]]]), cv.type, cv.attrs) : Float64Array.from({ length: shape[i] }, (_, k) => k);
    return asType(values, d, req.columns[d], hasCoordinate ? cv : undefined, units);
  });

  // which indices of each dimension the select keeps, and the hyperslab covering them
  const keep: number[][] = coords.map((c) => Array.from({ length: c.length }, (_, k) => k));
  for (const [d, [lo, hi]] of Object.entries(req.select)) {
    const at = dims.indexOf(d);
    if (at < 0) throw new DendrologError(messages.netcdfSelectUnknown(display, d, dims), 2);
    const bound = (b: number | string | null): number => {
      if (b === null) return NaN;
      if (req.columns[d] === 'date') {
        const ms = typeof b === 'string' ? parseDate(b.trim(), 'YYYY-MM-DD') : undefined;
        if (ms === undefined) throw new DendrologError(`${display}: ${messages.netcdfSelectValue(d, b, 'date (YYYY-MM-DD)')}`, 2);
        return ms;
      }
      if (typeof b !== 'number') throw new DendrologError(`${display}: ${messages.netcdfSelectValue(d, b, 'number')}`, 2);
      return b;
    };
    const [a, b] = [bound(lo), bound(hi)];
    keep[at] = keep[at].filter((k) => {
      const x = coords[at][k];
      return !Number.isNaN(x) && (Number.isNaN(a) || x >= a) && (Number.isNaN(b) || x <= b);
    });
  }
  const ranges: [number, number][] = keep.map((k) => (k.length === 0 ? [0, 0] : [k[0], k[k.length - 1] + 1]));

  const rows = keep.reduce((n, k) => n * k.length, 1);
  const data = vars.map((v) => {
    const raw = rows === 0 ? new Float64Array(0) : file.read(v, ranges);
    const values = unpack(raw, v.type, v.attrs);
    const missing = new Set(req.missing);
    if (missing.size > 0) for (let i = 0; i < values.length; i++) if (missing.has(String(values[i]))) values[i] = NaN;
    return asType(values, v.name, req.columns[v.name], v, units);
  });

  // walk the kept grid points in row-major order; positions are relative to the hyperslab
  const out = [...dims, ...names].map(() => new Float64Array(rows));
  const slabCounts = ranges.map(([a, b]) => b - a);
  const strides = slabCounts.map((_, i) => slabCounts.slice(i + 1).reduce((a, b) => a * b, 1));
  const pos = keep.map(() => 0);
  for (let r = 0; r < rows; r++) {
    let off = 0;
    for (let d = 0; d < dims.length; d++) {
      const k = keep[d][pos[d]];
      out[d][r] = coords[d][k];
      off += (k - ranges[d][0]) * strides[d];
    }
    for (let j = 0; j < vars.length; j++) out[dims.length + j][r] = data[j][off];
    for (let d = dims.length - 1; d >= 0; d--) {
      if (++pos[d] < keep[d].length) break;
      pos[d] = 0;
    }
  }
  // columns in the order the recipe declares them
  const made = new Map<string, Column>([...dims, ...names].map((n, i) => [n, { name: n, type: req.columns[n], values: out[i] } as Column]));
  const columns = Object.keys(req.columns).map((c) => made.get(c)!);
  const skipped = Object.keys(req.select).length > 0 ? `; select kept ${rows} of ${shape.reduce((a, b) => a * b, 1)} grid points` : '';
  return {
    columns,
    rows,
    fileColumns: file.variables.map((v) => v.name),
    undeclared: [],
    units,
    detail: `${file.kind} NetCDF; ${names.join(', ')} over ${dims.join(' × ') || 'no dimensions'}${skipped}`,
  };

  function asType(values: Float64Array, name: string, type: ColumnType, v: NcVariable | undefined, unitsOut: Record<string, string>): Float64Array {
    const u = v ? textOf(v.attrs.units) : undefined;
    if (type !== 'date') {
      if (u) unitsOut[name] = u;
      return values;
    }
    const dec = timeDecoder(u, v ? textOf(v.attrs.calendar) : undefined);
    if (!dec.ok) {
      if (dec.reason === 'calendar') throw new DendrologError(messages.netcdfCalendar(display, name, dec.why), 1);
      throw new DendrologError(messages.netcdfTimeUnits(display, name, u ?? '', dec.why), 1);
    }
    return values.map((x) => (Number.isNaN(x) ? NaN : dec.decode(x)));
  }
}
