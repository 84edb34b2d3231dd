import { existsSync } from 'node:fs';
import { dirname, join } from 'node:path';
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
