import { createHash } from 'node:crypto';
import { dict } from './dict.js';

/**
 * Canonical JSON: object keys sorted, no whitespace, so equal values always hash equally.
 *
 * Example: `canonicalJson({b: 1, a: [2]}) === '{"a":[2],"b":1}'`
 */
export function canonicalJson(value: unknown): string {
  return JSON.stringify(sortKeys(value));
}

function sortKeys(value: unknown): unknown {
  if (Array.isArray(value)) return value.map(sortKeys);
  if (value && typeof value === 'object' && !(value instanceof Date)) {
    const out = dict<unknown>();
    for (const k of Object.keys(value as Record<string, unknown>).sort()) {
      const v = (value as Record<string, unknown>)[k];
      if (v !== undefined) out[k] = sortKeys(v);
    }
    return out;
  }
  return value;
}

/** SHA-256 of bytes or a string, as lowercase hex. Example: `sha256('')` starts with `e3b0c442`. */
export function sha256(data: string | Uint8Array | Uint8Array[]): string {
  const h = createHash('sha256');
  // chunks (a file written in parts) hash as the bytes they make one after another
  if (Array.isArray(data)) for (const chunk of data) h.update(chunk);
  else h.update(data);
  return h.digest('hex');
}

/** SHA-256 of the canonical JSON of a value. */
export function hashValue(value: unknown): string {
  return sha256(canonicalJson(value));
}
