import { execFileSync } from 'node:child_process';
import { writeFileSync } from 'node:fs';
import { describe } from 'vitest';
import { join } from 'node:path';
import type { Column } from '../../../core/frame.js';
import type { FrameOutput } from '../../../core/step-types.js';
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

export { errorOf } from '../../helpers.js';

/** A column's values as plain JS: NaN as null, so toEqual compares missing values. */
export function plain(c: Column): (number | string | null)[] {
  return Array.from(c.values as ArrayLike<number | string | null>, (v) => (typeof v === 'number' && Number.isNaN(v) ? null : v));
}

/** Columns of a frame by name, as plain arrays. */
export function byName(o: FrameOutput): Record<string, (number | string | null)[]> {
  return Object.fromEntries(o.frame.columns.map((c) => [c.name, plain(c)]));
}

function has(cmd: string): boolean {
  try {
    execFileSync(cmd, [], { stdio: 'ignore' });
    return true;
  } catch (e) {
    return (e as NodeJS.ErrnoException).code !== 'ENOENT';
  }
}

// Unidata's ncgen writes the NetCDF fixtures from CDL; CI installs it (netcdf-bin), elsewhere the tests skip
/** Whether Unidata's ncgen is on this machine. */
export const NCGEN_INSTALLED = has('ncgen');
if (!NCGEN_INSTALLED && process.env.CI) throw new Error('ncgen is required for the NetCDF tests: apt-get install netcdf-bin');
/** `describe` where ncgen is installed, `describe.skip` elsewhere. */
export const describeNc = NCGEN_INSTALLED ? describe : describe.skip;

/** Builds a NetCDF file of the given kind from CDL text with ncgen; returns its path. */
export function ncgen(cdl: string, kind: 'classic' | '64-bit-offset' | 'netCDF-4' | 'cdf5', name = 'grid'): string {
  const dir = makeFolder({ [`${name}.cdl`]: cdl });
  const out = join(dir, `${name}-${kind}.nc`);
  execFileSync('ncgen', ['-k', kind, '-o', out, join(dir, `${name}.cdl`)]);
  return out;
}
