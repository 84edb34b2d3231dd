import { existsSync, readFileSync } from 'node:fs';
import { join } from 'node:path';
import { DendrologError, messages } from './messages.js';
import { manifestProblems, type Manifest } from './manifest.js';
import { displayOf } from './recipe.js';

/**
 * Reads and checks a run folder's manifest.json; stops with a clear message when it is missing or
 * does not match schemas/manifest.v1.json.
 */
export function readManifest(folder: string): Manifest {
  const path = join(folder, 'manifest.json');
  if (!existsSync(path)) throw new DendrologError(messages.notARunFolder(displayOf(folder)), 2);
  let manifest: unknown;
  try {
    manifest = JSON.parse(readFileSync(path, 'utf8'));
  } catch (e) {
    throw new DendrologError(messages.manifestUnreadable(displayOf(path), (e as Error).message), 2);
  }
  const problems = manifestProblems(manifest);
  if (problems.length > 0) throw new DendrologError(messages.manifestUnreadable(displayOf(path), problems.slice(0, 3).join('; ')), 2);
  return manifest as Manifest;
}
