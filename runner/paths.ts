import { existsSync } from 'node:fs';
import { dirname, isAbsolute, join, relative, sep } from 'node:path';
import { fileURLToPath } from 'node:url';

/** The package's root folder (holding package.json), whether running from source or from dist/. */
export function packageRoot(): string {
  let dir = dirname(fileURLToPath(import.meta.url));
  for (let i = 0; i < 5; i++) {
    if (existsSync(join(dir, 'package.json')) && existsSync(join(dir, 'schemas'))) return dir;
    dir = dirname(dir);
  }
  throw new Error('dendrolog: cannot find the package root (package.json beside schemas/)');
}

/**
 * Whether p lies under root (root itself only with `orSame`). A name that merely starts with two
 * dots, such as "..notes.csv", is inside; only the ".." path segment leads out.
 *
 * Example: `isInside('/r', '/r/..x')` is true, `isInside('/r', '/r/../x')` is false.
 */
export function isInside(root: string, p: string, orSame = false): boolean {
  const rel = relative(root, p);
  if (rel === '') return orSame;
  return rel !== '..' && !rel.startsWith('..' + sep) && !isAbsolute(rel);
}

/** A path as the user should see it: relative to the working folder when inside it. */
export function displayOf(abs: string): string {
  return isInside(process.cwd(), abs) ? relative(process.cwd(), abs) : abs;
}
