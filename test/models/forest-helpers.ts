/**
 * Shared helpers for the forest-engine tests: reading the Friedman #1 CSV fixture and comparing
 * typed arrays bit for bit.
 */
import { readFileSync } from 'node:fs';
import type { Matrix } from '../../models/forest.js';

/** A fixture CSV of numeric columns whose last column is the target `y`. */
export function readXyCsv(name: string): { x: Matrix; y: Float64Array } {
  const text = readFileSync(new URL(`./fixtures/${name}`, import.meta.url), 'utf8').trim();
  const lines = text.split('\n');
  const header = lines[0].split(',');
  const p = header.length - 1;
  const rows = lines.length - 1;
  const columns = Array.from({ length: p }, () => new Float64Array(rows));
  const y = new Float64Array(rows);
  for (let r = 0; r < rows; r++) {
    const v = lines[r + 1].split(',');
    for (let f = 0; f < p; f++) columns[f][r] = Number(v[f]);
    y[r] = Number(v[p]);
  }
  return { x: { columns, names: header.slice(0, p), rows }, y };
}

/** True when both arrays hold the same bits (NaN equal to NaN, 0 different from -0). */
export function sameBits(a: Float64Array | Int32Array | Uint8Array, b: Float64Array | Int32Array | Uint8Array): boolean {
  if (a.length !== b.length) return false;
  const ua = new Uint8Array(a.buffer, a.byteOffset, a.byteLength);
  const ub = new Uint8Array(b.buffer, b.byteOffset, b.byteLength);
  for (let i = 0; i < ua.length; i++) if (ua[i] !== ub[i]) return false;
  return true;
}

/** A one-column matrix. */
export function column(name: string, values: number[]): Matrix {
  return { columns: [Float64Array.from(values)], names: [name], rows: values.length };
}
