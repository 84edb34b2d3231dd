import { closeSync, openSync, readFileSync, readSync, statSync } from 'node:fs';
import { NetCDFReader } from 'netcdfjs';
import { DendrologError, messages } from '../../core/messages.js';
import type { Attributes, NcType } from './cf.js';
import { dict } from '../../core/dict.js';

/** One variable of a NetCDF file, as both backends describe it. */
export interface NcVariable {
  name: string;
  dims: string[];
  shape: number[];
  type: NcType;
  attrs: Attributes;
}

/** An open NetCDF file: its variables, and hyperslab reads of one (row-major, half-open ranges). */
export interface NcFile {
  kind: 'classic' | '64-bit offset' | 'NetCDF-4';
  variables: NcVariable[];
  read(v: NcVariable, ranges: [number, number][]): ArrayLike<number>;
  close(): void;
}

const HDF5_SIGNATURE = [0x89, 0x48, 0x44, 0x46, 0x0d, 0x0a, 0x1a, 0x0a];

/**
 * Opens a NetCDF file by its first bytes: "CDF\x01" classic and "CDF\x02" 64-bit offset through
 * netcdfjs, an HDF5 signature (NetCDF-4) through h5wasm. Anything else, or a file too short to
 * hold its header, stops with a message and no stack trace.
 *
 * Example: `const f = await openNetcdf('grid.nc', 'grid.nc'); f.variables.map((v) => v.name)`
 */
export async function openNetcdf(path: string, display: string): Promise<NcFile> {
  const head = Buffer.alloc(8);
  const fd = openSync(path, 'r');
  let got: number;
  try {
    got = readSync(fd, head, 0, 8, 0);
  } finally {
    closeSync(fd);
  }
  const start = head.subarray(0, got);
  if (start[0] === 0x43 && start[1] === 0x44 && start[2] === 0x46) {
    if (start[3] === 1 || start[3] === 2) return openClassic(path, display);
    if (start[3] === 5) {
      throw new DendrologError(messages.sourceUnreadable(display, 'NetCDF', 'it is the CDF-5 variant, which dendrolog does not read; convert it with "nccopy -k netCDF-4 in.nc out.nc"'), 1);
    }
  }
  if (HDF5_SIGNATURE.every((b, i) => start[i] === b)) return openHdf5(path, display);
  throw new DendrologError(messages.netcdfNotNetcdf(display, describeStart(start)), 1);
}

function describeStart(bytes: Uint8Array): string {
  if (bytes.length === 0) return 'nothing: the file is empty';
  const printable = [...bytes].every((b) => b >= 0x20 && b < 0x7f);
  return printable ? JSON.stringify(Buffer.from(bytes).toString('latin1')) : `the bytes ${[...bytes].map((b) => b.toString(16).padStart(2, '0')).join(' ')}`;
}

const NC3_TYPES: Record<string, NcType> = { byte: 'byte', char: 'char', short: 'short', int: 'int', float: 'float', double: 'double' };

function openClassic(path: string, display: string): NcFile {
  const bytes = readFileSync(path);
  let reader: NetCDFReader;
  try {
    reader = new NetCDFReader(bytes);
  } catch (e) {
    throw new DendrologError(messages.netcdfTruncated(display, `its header cannot be read: ${(e as Error).message}`), 1);
  }
  const dims = reader.dimensions;
  const records = reader.recordDimension;
  const variables: NcVariable[] = reader.variables.map((v) => ({
    name: v.name,
    dims: v.dimensions.map((d) => dims[d].name),
    shape: v.dimensions.map((d) => (d === records.id ? records.length : dims[d].size)),
    type: NC3_TYPES[v.type] ?? 'byte',
    attrs: dict((v.attributes as { name: string; value: unknown }[]).map((a) => [a.name, a.value])),
  }));
  const raw = new Map(reader.variables.map((v) => [v.name, v]));
  return {
    kind: reader.version === 'classic format' ? 'classic' : '64-bit offset',
    variables,
    read(v, ranges) {
      const meta = raw.get(v.name)!;
      const count = v.shape.reduce((a, b) => a * b, 1);
      // the header promises data at these offsets; a shorter file was cut off
      const size = count === 0 ? 0 : meta.record ? (meta.offset as number) + (records.length - 1) * (records.recordStep ?? 0) + meta.size : (meta.offset as number) + meta.size;
      if (count > 0 && size > bytes.length) {
        throw new DendrologError(messages.netcdfTruncated(display, `variable "${v.name}" needs ${size} bytes, the file has ${bytes.length}`), 1);
      }
      const data = count === 0 ? [] : reader.getDataVariable(meta);
      const flat = new Float64Array(count);
      let k = 0;
      for (const item of data) {
        if (Array.isArray(item)) for (const x of item) flat[k++] = Number(x);
        else flat[k++] = Number(item);
        if (k >= count) break;
      }
      return slab(flat, v.shape, ranges);
    },
    close() {},
  };
}

/** The values of a row-major array inside half-open ranges per dimension, row-major. */
export function slab(flat: ArrayLike<number>, shape: number[], ranges: [number, number][]): Float64Array {
  const counts = ranges.map(([a, b]) => b - a);
  const total = counts.reduce((a, b) => a * b, 1);
  const out = new Float64Array(total);
  if (total === 0) return out;
  const strides = shape.map((_, i) => shape.slice(i + 1).reduce((a, b) => a * b, 1));
  const idx = ranges.map(([a]) => a);
  for (let k = 0; k < total; k++) {
    let off = 0;
    for (let d = 0; d < idx.length; d++) off += idx[d] * strides[d];
    out[k] = flat[off];
    for (let d = idx.length - 1; d >= 0; d--) {
      if (++idx[d] < ranges[d][1]) break;
      idx[d] = ranges[d][0];
    }
  }
  return out;
}

/** Attributes netCDF-4 keeps for its own bookkeeping (dimension scales, ids), not the user's. */
const NC4_INTERNAL = new Set(['_Netcdf4Coordinates', '_Netcdf4Dimid', 'CLASS', 'NAME', 'REFERENCE_LIST', 'DIMENSION_LIST', '_nc3_strict', '_NCProperties', '_IsNetcdf4']);

interface H5Dataset {
  shape: number[] | null;
  metadata: { type: number; size: number; signed: boolean };
  attrs: Record<string, { value: unknown }>;
  slice(ranges: [number, number][]): unknown;
  get_attached_scales(index: number): string[];
}

async function openHdf5(path: string, display: string): Promise<NcFile> {
  // h5wasm's Node build reads the file where it is (and ships its WebAssembly inside the package)
  const h5wasm = (await import('h5wasm/node')).default;
  await h5wasm.ready;
  const short = hdf5Shortfall(path);
  if (short) throw new DendrologError(messages.netcdfTruncated(display, short), 1);
  const opened = quietly(() => new h5wasm.File(path, 'r'));
  if ('error' in opened || !(Number((opened.value as unknown as { file_id: bigint }).file_id) > 0)) {
    throw new DendrologError(messages.netcdfTruncated(display, `HDF5 could not open it: ${'error' in opened ? opened.error : opened.diagnostics || 'no reason given'}`), 1);
  }
  const file = opened.value;
  try {
    const variables: NcVariable[] = [];
    const datasets = new Map<string, H5Dataset>();
    for (const name of file.keys()) {
      const entity = file.get(name) as unknown;
      if (!entity || typeof entity !== 'object' || !('shape' in entity) || !('slice' in entity)) continue;
      const ds = entity as H5Dataset;
      const attrs: Attributes = dict();
      for (const [k, a] of Object.entries(ds.attrs)) if (!NC4_INTERNAL.has(k)) attrs[k] = a.value;
      const nameAttr = ds.attrs.NAME?.value;
      // a dimension without a coordinate variable is stored as a dataset marked like this
      if (typeof nameAttr === 'string' && nameAttr.startsWith('This is a netCDF dimension but not a netCDF variable')) continue;
      const shape = ds.shape ?? [];
      const isScale = ds.attrs.CLASS?.value === 'DIMENSION_SCALE';
      const dims = shape.map((_, i) => {
        const scales = ds.get_attached_scales(i);
        if (scales.length > 0) return scales[0].replace(/^.*\//, '');
        // a coordinate variable is the dimension scale of its own dimension
        return isScale && i === 0 ? name : `phony_dim_${i}`;
      });
      variables.push({ name, dims, shape, type: h5Type(ds.metadata), attrs });
      datasets.set(name, ds);
    }
    return {
      kind: 'NetCDF-4',
      variables,
      read(v, ranges) {
        const ds = datasets.get(v.name)!;
        const got = quietly(() => (v.shape.length === 0 ? (ds as unknown as { value: unknown }).value : ds.slice(ranges)));
        if ('error' in got) throw new DendrologError(messages.netcdfTruncated(display, `variable "${v.name}" cannot be read: ${got.error}`), 1);
        const data = got.value;
        if (typeof data === 'number' || typeof data === 'bigint') return [Number(data)];
        if (data instanceof BigInt64Array || data instanceof BigUint64Array) return Float64Array.from(data, (x) => Number(x));
        if (ArrayBuffer.isView(data)) return data as unknown as ArrayLike<number>;
        throw new DendrologError(messages.netcdfNotNumeric(display, v.name, typeof data), 1);
      },
      close: () => file.close(),
    };
  } catch (e) {
    file.close();
    throw e;
  }
}

/** HDF5 class 0 is integer, 1 is float, 3 is string (H5T_class_t). */
function h5Type(m: { type: number; size: number; signed: boolean }): NcType {
  if (m.type === 1) return m.size === 4 ? 'float' : 'double';
  if (m.type === 0) {
    const names: Record<number, [NcType, NcType]> = { 1: ['byte', 'ubyte'], 2: ['short', 'ushort'], 4: ['int', 'uint'], 8: ['int64', 'uint64'] };
    const pair = names[m.size] ?? ['int', 'uint'];
    return m.signed ? pair[0] : pair[1];
  }
  return 'string';
}

/**
 * Runs an h5wasm call with HDF5's diagnostic printing (which goes straight to stderr) caught, so a
 * bad file gives one message rather than a page of library internals.
 */
function quietly<T>(f: () => T): { value: T; diagnostics: string } | { error: string } {
  const write = process.stderr.write;
  let text = '';
  process.stderr.write = ((chunk: string | Uint8Array) => {
    text += String(chunk);
    return true;
  }) as typeof process.stderr.write;
  try {
    const value = f();
    return { value, diagnostics: lastDiagnostic(text) };
  } catch (e) {
    return { error: lastDiagnostic(text) || (e instanceof Error ? e.message : String(e)) };
  } finally {
    process.stderr.write = write;
  }
}

/** The innermost line of an HDF5 error stack, where the actual reason is. */
function lastDiagnostic(text: string): string {
  const lines = text.split('\n').filter((l) => /^\s*#\d+:/.test(l));
  const last = lines[lines.length - 1];
  return last ? last.replace(/^\s*#\d+:.* in [^(]+\(\): /, '').trim() : '';
}

/**
 * Compares the end-of-file address an HDF5 superblock records with the file's size (HDF5 File
 * Format Specification 3.0, section II.A): a shorter file was cut off. Returns why, or ''.
 */
function hdf5Shortfall(path: string): string {
  const size = statSync(path).size;
  const head = Buffer.alloc(96);
  const fd = openSync(path, 'r');
  let got: number;
  try {
    got = readSync(fd, head, 0, head.length, 0);
  } finally {
    closeSync(fd);
  }
  if (got < 24) return `it is ${size} bytes long, too short to hold an HDF5 superblock`;
  const version = head[8];
  let offsets: number;
  let eofAt: number;
  if (version === 0 || version === 1) {
    offsets = head[13];
    eofAt = 24 + (version === 1 ? 4 : 0) + 2 * offsets;
  } else {
    offsets = head[9];
    eofAt = 12 + 2 * offsets;
  }
  if (offsets !== 8 && offsets !== 4) return '';
  if (got < eofAt + offsets) return `it is ${size} bytes long, too short to hold an HDF5 superblock`;
  const eof = offsets === 8 ? Number(head.readBigUInt64LE(eofAt)) : head.readUInt32LE(eofAt);
  return eof > size ? `HDF5 records ${eof} bytes, the file has ${size}` : '';
}
