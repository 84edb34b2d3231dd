import { createHash, type Hash } from 'node:crypto';
import type { Frame } from '../../core/frame.js';

const MAGIC = 0x31544c44; // "DLT1" little-endian, as core/frame.ts writes it
/** Text values stringified per piece: keeps every string small however long the column. */
const PIECE = 8192;

/**
 * SHA-256 of `encodeFrame(frame)` (with no notes), computed without building the encoded bytes:
 * the JSON header is hashed in pieces and the number columns straight from their arrays, so hashing
 * a table of several gigabytes needs no second copy of it. A test holds it equal to hashing
 * `encodeFrame`'s output.
 *
 * Example: `tableSha256(frame) === sha256(encodeFrame(frame))`
 */
export function tableSha256(frame: Frame): string {
  const text = frame.columns.filter((c) => !(c.values instanceof Float64Array));
  const numeric = frame.columns.filter((c) => c.values instanceof Float64Array);
  // JSON.stringify of encodeFrame's header object, written out in the same key order
  const pieces = function* (): Generator<string> {
    yield `{"rows":${JSON.stringify(frame.rows)},"columns":${JSON.stringify(frame.columns.map((c) => ({ name: c.name, type: c.type })))},"text":{`;
    let first = true;
    for (const c of text) {
      yield `${first ? '' : ','}${JSON.stringify(c.name)}:[`;
      first = false;
      const values = c.values as (string | null)[];
      for (let i = 0; i < values.length; i += PIECE) {
        const part = JSON.stringify(values.slice(i, i + PIECE));
        yield (i > 0 ? ',' : '') + part.slice(1, -1);
      }
      yield ']';
    }
    yield '},"notes":null}';
  };
  let jsonLength = 0;
  for (const p of pieces()) jsonLength += Buffer.byteLength(p, 'utf8');
  const hash = createHash('sha256');
  const head = Buffer.alloc(8);
  head.writeUInt32LE(MAGIC, 0);
  head.writeUInt32LE(jsonLength, 4);
  hash.update(head);
  for (const p of pieces()) hash.update(p, 'utf8');
  const headLen = 8 + jsonLength;
  const pad = (8 - (headLen % 8)) % 8;
  if (pad > 0) hash.update(Buffer.alloc(pad));
  for (const c of numeric) updateWithColumn(hash, c.values as Float64Array, frame.rows);
  return hash.digest('hex');
}

function updateWithColumn(hash: Hash, values: Float64Array, rows: number): void {
  const bytes = new Uint8Array(values.buffer, values.byteOffset, rows * 8);
  // hash in slices: a single update of gigabytes is fine, but slices keep progress possible
  const step = 64 << 20;
  for (let i = 0; i < bytes.length; i += step) hash.update(bytes.subarray(i, i + step));
}
