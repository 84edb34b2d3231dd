import { writeFileSync } from 'node:fs';
import { join } from 'node:path';
import type { Column } from '../../../runner/frame.js';
import { DendrologError } from '../../../runner/messages.js';
import type { FrameOutput } from '../../../runner/step-types.js';
import { source, type SourceParams } from '../../../steps/source.js';
import { makeFolder, stepContext } from '../../helpers.js';

/** Runs the real source step on a file, as the executor would. */
export async function readSource(path: string, params: Omit<SourceParams, 'sha256' | 'missing'> & { missing?: string[] }): Promise<FrameOutput> {
  const ctx = { ...stepContext(), locator: { path, display: path, file: path } };
  return source.run([], { sha256: 'test', missing: ['', 'NA'], ...params }, ctx) as Promise<FrameOutput>;
}

/** A file with the given text in a fresh temporary folder; returns its path. */
export function fileWith(name: string, text: string | Uint8Array): string {
  const dir = makeFolder({});
  const path = join(dir, name);
  writeFileSync(path, text);
  return path;
}

/** The DendrologError a call throws (sync or async). */
export async function errorOf(f: () => unknown): Promise<DendrologError> {
  try {
    await f();
  } catch (e) {
    if (e instanceof DendrologError) return e;
    throw e;
  }
  throw new Error('expected an error');
}

/** A column's values as plain JS: NaN as null, so toEqual compares missing values. */
export function plain(c: Column): (number | string | null)[] {
  return Array.from(c.values as ArrayLike<number | string | null>, (v) => (typeof v === 'number' && Number.isNaN(v) ? null : v));
}

/** Columns of a frame by name, as plain arrays. */
export function byName(o: FrameOutput): Record<string, (number | string | null)[]> {
  return Object.fromEntries(o.frame.columns.map((c) => [c.name, plain(c)]));
}
