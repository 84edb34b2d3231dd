import { decodeFrame, encodeFrame } from './frame.js';
import type { FrameOutput, OutputCodec, Warning } from './step-types.js';
import { parseJson } from './dict.js';

/**
 * A step's output as cache bytes: 4-byte length, the step's warnings as JSON, then the output in
 * its codec (frame binary, JSON, bytes as they are, or a record: JSON whose binary fields follow it
 * as raw bytes, see encodeRecord). The same bytes go to the cache and between threads; a large
 * entry (SHARED_ENTRY_BYTES on) is made in shared memory, so the threads it goes to share it.
 *
 * Example: `unpackEntry('json', packEntry('json', {a: 1}, [])).output` is `{a: 1}`.
 */
export function packEntry(codec: OutputCodec, output: unknown, warnings: Warning[]): Uint8Array {
  // spaces after the warnings' JSON start the body at a multiple of 8, so a fitted model's arrays
  // can be read in place (see encodeRecord)
  const text = JSON.stringify(warnings);
  const w = Buffer.from(text.padEnd(text.length + ((8 - ((4 + Buffer.byteLength(text)) % 8)) % 8)), 'utf8');
  const prefix = 4 + w.length;
  let out: Uint8Array;
  if (codec === 'record') {
    // written in place after the warnings: a fitted model's bytes are copied once, not twice
    out = recordBytes(output, prefix);
  } else {
    const body =
      codec === 'frame'
        ? encodeFrame((output as FrameOutput).frame, (output as FrameOutput).notes)
        : codec === 'bytes'
          ? (output as Uint8Array)
          : new Uint8Array(Buffer.from(JSON.stringify(output), 'utf8'));
    out = entryMemory(prefix + body.length);
    out.set(body, prefix);
  }
  new DataView(out.buffer).setUint32(0, w.length, true);
  out.set(w, 4);
  return out;
}

/** Entries from this size on are kept in shared memory (packEntry, placeEntry). */
export const SHARED_ENTRY_BYTES = 1 << 20;

/** Zeroed memory for an entry of `size` bytes: shared from SHARED_ENTRY_BYTES on (see placeEntry). */
function entryMemory(size: number): Uint8Array {
  return new Uint8Array(size >= SHARED_ENTRY_BYTES ? new SharedArrayBuffer(size) : new ArrayBuffer(size));
}

/**
 * A packed entry placed for reading in place: a large one (a fitted model) in shared memory, so
 * every thread it is sent to (a step on the pool, that step's helpers) reads the one copy instead of
 * receiving its own; a small one at a multiple of 8 bytes (an entry read from a cache file starts
 * after header lines of any length), where a forest's arrays are views rather than copies
 * (models/serialize.ts). Returns `payload` itself when it is placed so already.
 *
 * Example: `unpackEntry(codec, placeEntry(cache.get(address).bytes))`
 */
export function placeEntry(payload: Uint8Array): Uint8Array {
  if (payload.length >= SHARED_ENTRY_BYTES) {
    if (payload.buffer instanceof SharedArrayBuffer && payload.byteOffset % 8 === 0) return payload;
    const shared = new Uint8Array(new SharedArrayBuffer(payload.length));
    shared.set(payload);
    return shared;
  }
  return payload.byteOffset % 8 === 0 ? payload : payload.slice();
}

/** Inverse of packEntry; `body` is the encoded output alone, whose SHA-256 the manifest records. */
export function unpackEntry(codec: OutputCodec, payload: Uint8Array): { output: unknown; body: Uint8Array; stepWarnings: Warning[] } {
  const n = new DataView(payload.buffer, payload.byteOffset, payload.byteLength).getUint32(0, true);
  if (4 + n > payload.length) throw new Error(`the step's warnings claim ${n} bytes, more than the ${payload.length - 4} stored`);
  const stepWarnings = JSON.parse(Buffer.from(payload.subarray(4, 4 + n)).toString('utf8')) as Warning[];
  if (!Array.isArray(stepWarnings)) throw new Error("the step's warnings are not a list");
  const body = payload.subarray(4 + n);
  return { output: decodeOutput(codec, body), body, stepWarnings };
}

/** An encoded output back into the value steps consume. */
export function decodeOutput(codec: OutputCodec, body: Uint8Array): unknown {
  if (codec === 'frame') {
    const { frame, notes } = decodeFrame(body);
    return { frame, notes };
  }
  if (codec === 'bytes') return body;
  if (codec === 'record') return decodeRecord(body);
  return parseJson(Buffer.from(body).toString('utf8'));
}

/**
 * A binary field of a record that writes itself into the record's bytes instead of being copied
 * there from an array of its own: a fitted forest's bytes go straight into its step's entry, so
 * they are never held twice. Decoded, the field is a Uint8Array like any other.
 *
 * Example: `new BytesWriter(3, (into) => into.set([1, 2, 3])).bytes()` is `Uint8Array [1, 2, 3]`.
 */
export class BytesWriter {
  constructor(
    readonly length: number,
    private readonly writeInto: (into: Uint8Array) => void,
  ) {}

  /** Writes the bytes into `into`, which is `length` long. */
  write(into: Uint8Array): void {
    this.writeInto(into);
  }

  /** The bytes in an array of their own, for a caller that needs one. */
  bytes(): Uint8Array {
    const out = new Uint8Array(this.length);
    this.writeInto(out);
    return out;
  }
}

/** Bytes as an array, or to be written where they go. */
export type Bytes = Uint8Array | BytesWriter;

/** The bytes as an array (made, for a writer). */
export function bytesOf(b: Bytes): Uint8Array {
  return b instanceof BytesWriter ? b.bytes() : b;
}

/**
 * Numbers as a record's binary field: the bytes of the array, not a copy (this machine's byte order,
 * little-endian on every platform Node.js runs on here).
 *
 * Example: `float64sOf(float64Bytes(Float64Array.of(1.5)))[0]` is 1.5.
 */
export function float64Bytes(values: Float64Array): Uint8Array {
  return new Uint8Array(values.buffer, values.byteOffset, values.byteLength);
}

/** The numbers float64Bytes made, as a view where the bytes sit at a multiple of 8, else copied. */
export function float64sOf(bytes: Uint8Array): Float64Array {
  if (bytes.length % 8 !== 0) throw new Error(`${bytes.length} bytes are not a whole number of 8-byte numbers`);
  if (bytes.byteOffset % 8 === 0) return new Float64Array(bytes.buffer, bytes.byteOffset, bytes.length / 8);
  return new Float64Array(bytes.slice().buffer);
}

/**
 * A JSON value whose Uint8Array (or BytesWriter) fields (a fitted model's bytes) travel as raw bytes
 * rather than as text: 4-byte length and the JSON, with null where each array was, then 4-byte length and the
 * list of those places (paths of keys and indexes, padded with spaces so that the first array starts
 * at a multiple of 8 bytes), then the arrays one after another. Paths, not
 * markers in the JSON, so no key or value from the data can be mistaken for one.
 *
 * Example: `decodeRecord(encodeRecord({model: 'm', bytes: Uint8Array.of(1, 2)})).bytes` is `Uint8Array [1, 2]`.
 */
export function encodeRecord(value: unknown): Uint8Array {
  return recordBytes(value, 0);
}

/** encodeRecord's bytes after `prefix` bytes left zero (where packEntry puts the warnings). */
function recordBytes(value: unknown, prefix: number): Uint8Array {
  const places: { path: (string | number)[]; length: number }[] = [];
  const blobs: Bytes[] = [];
  const strip = (v: unknown, path: (string | number)[]): unknown => {
    if (v instanceof Uint8Array || v instanceof BytesWriter) {
      places.push({ path, length: v.length });
      blobs.push(v);
      return null;
    }
    if (Array.isArray(v)) return v.some((x) => x !== null && typeof x === 'object') ? v.map((x, i) => strip(x, [...path, i])) : v;
    if (v !== null && typeof v === 'object' && !ArrayBuffer.isView(v)) {
      const out: Record<string, unknown> = Object.create(null) as Record<string, unknown>;
      for (const [k, x] of Object.entries(v)) out[k] = strip(x, [...path, k]);
      return out;
    }
    return v;
  };
  const json = Buffer.from(JSON.stringify(strip(value, [])), 'utf8');
  // spaces after the index start the first array at a multiple of 8 from the body's start: a fitted
  // forest's arrays are then read as views of the entry (models/serialize.ts), not copied
  const placesText = JSON.stringify(places);
  const index = Buffer.from(placesText.padEnd(placesText.length + ((8 - ((8 + json.length + Buffer.byteLength(placesText)) % 8)) % 8)), 'utf8');
  const total = prefix + 8 + json.length + index.length + blobs.reduce((n, b) => n + b.length, 0);
  const out = prefix > 0 ? entryMemory(total) : new Uint8Array(total);
  const view = new DataView(out.buffer);
  let at = prefix;
  view.setUint32(at, json.length, true);
  out.set(json, at + 4);
  at += 4 + json.length;
  view.setUint32(at, index.length, true);
  at += 4;
  out.set(index, at);
  at += index.length;
  for (const b of blobs) {
    if (b instanceof BytesWriter) b.write(out.subarray(at, at + b.length));
    else out.set(b, at);
    at += b.length;
  }
  return out;
}

/** Inverse of encodeRecord; throws a plain Error when the lengths do not add up. */
export function decodeRecord(body: Uint8Array): unknown {
  const view = new DataView(body.buffer, body.byteOffset, body.byteLength);
  const n = body.length >= 4 ? view.getUint32(0, true) : Infinity;
  if (8 + n > body.length) throw new Error(`the record's JSON claims ${n} bytes, more than the ${body.length} stored`);
  const value = parseJson(Buffer.from(body.subarray(4, 4 + n)).toString('utf8'));
  const m = view.getUint32(4 + n, true);
  let at = 8 + n + m;
  if (at > body.length) throw new Error(`the record's index claims ${m} bytes, more than are stored`);
  const places = parseJson(Buffer.from(body.subarray(8 + n, at)).toString('utf8')) as { path: (string | number)[]; length: number }[];
  for (const { path, length } of places) {
    if (at + length > body.length) throw new Error(`the record's binary fields claim more bytes than are stored`);
    let holder = value as Record<string | number, unknown>;
    for (const key of path.slice(0, -1)) holder = holder[key] as Record<string | number, unknown>;
    // a field that is most of the entry (a fitted model) is a view, not a second copy of it; a
    // smaller one is copied, so it does not keep the whole entry's buffer alive
    holder[path[path.length - 1]] = 2 * length >= body.length ? body.subarray(at, at + length) : body.slice(at, at + length);
    at += length;
  }
  if (at !== body.length) throw new Error(`the record holds ${body.length - at} bytes more than its fields`);
  return value;
}
