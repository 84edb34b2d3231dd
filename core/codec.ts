import { decodeFrame, encodeFrame } from './frame.js';
import type { FrameOutput, OutputCodec, Warning } from './step-types.js';
import { parseJson } from './dict.js';

/**
 * A step's output as cache bytes: 4-byte length, the step's warnings as JSON, then the output in
 * its codec (frame binary, JSON, or bytes as they are). The same bytes go to the cache and between
 * threads.
 *
 * Example: `unpackEntry('json', packEntry('json', {a: 1}, [])).output` is `{a: 1}`.
 */
export function packEntry(codec: OutputCodec, output: unknown, warnings: Warning[]): Uint8Array {
  const body =
    codec === 'frame'
      ? encodeFrame((output as FrameOutput).frame, (output as FrameOutput).notes)
      : codec === 'bytes'
        ? (output as Uint8Array)
        : new Uint8Array(Buffer.from(JSON.stringify(output), 'utf8'));
  const w = Buffer.from(JSON.stringify(warnings), 'utf8');
  const out = new Uint8Array(4 + w.length + body.length);
  new DataView(out.buffer).setUint32(0, w.length, true);
  out.set(w, 4);
  out.set(body, 4 + w.length);
  return out;
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
  return parseJson(Buffer.from(body).toString('utf8'));
}
