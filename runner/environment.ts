import { spawnSync } from 'node:child_process';
import { existsSync, readFileSync } from 'node:fs';
import { dirname, join } from 'node:path';
import { fileURLToPath } from 'node:url';
import { readdirSync } from 'node:fs';
import { hashValue, sha256 } from './hash.js';
import { packageRoot } from './paths.js';

export interface Environment {
  dendrolog: string;
  node: string;
  platform: string;
  arch: string;
  /** Exact versions of the runtime dependencies, from the lockfile. */
  dependencies: Record<string, string>;
}

/** dendrolog's version, Node's, the platform and the exact runtime dependency versions. */
export function environment(): Environment {
  const root = packageRoot();
  const pkg = JSON.parse(readFileSync(join(root, 'package.json'), 'utf8')) as {
    version: string;
    dependencies?: Record<string, string>;
  };
  const lockPath = join(root, 'package-lock.json');
  const lock = existsSync(lockPath)
    ? (JSON.parse(readFileSync(lockPath, 'utf8')) as { packages?: Record<string, { version?: string }> })
    : { packages: {} };
  const dependencies: Record<string, string> = {};
  for (const name of Object.keys(pkg.dependencies ?? {}).sort()) {
    const locked = lock.packages?.[`node_modules/${name}`]?.version;
    const installed = join(root, 'node_modules', name, 'package.json');
    dependencies[name] =
      locked ?? (existsSync(installed) ? (JSON.parse(readFileSync(installed, 'utf8')) as { version: string }).version : 'unknown');
  }
  return { dendrolog: pkg.version, node: process.version, platform: process.platform, arch: process.arch, dependencies };
}

/** The git commit holding a folder, and whether the folder has uncommitted changes; null outside git. */
export function gitState(dir: string): { commit: string; dirty: boolean } | null {
  const head = spawnSync('git', ['rev-parse', 'HEAD'], { cwd: dir, encoding: 'utf8' });
  if (head.status !== 0) return null;
  const status = spawnSync('git', ['status', '--porcelain', '--', '.'], { cwd: dir, encoding: 'utf8' });
  return { commit: head.stdout.trim(), dirty: status.stdout.trim().length > 0 };
}

let fingerprint: string | undefined;

/**
 * A hash of what computes the step outputs: dendrolog's version, the runtime dependency versions,
 * and the code of the steps and model engines as loaded. It is part of every step key, so a cache
 * filled by other code is never reused, and verify can tell a software change from a data change.
 */
export function softwareFingerprint(): string {
  if (fingerprint) return fingerprint;
  const here = dirname(fileURLToPath(import.meta.url));
  const code: Record<string, string> = {};
  for (const folder of ['steps', 'steps/readers', 'models']) {
    const dir = join(here, '..', folder);
    if (!existsSync(dir)) continue;
    for (const f of readdirSync(dir).sort()) {
      if (/\.(js|ts)$/.test(f)) code[`${folder}/${f}`] = sha256(readFileSync(join(dir, f)));
    }
  }
  const env = environment();
  fingerprint = hashValue({ dendrolog: env.dendrolog, dependencies: env.dependencies, code });
  return fingerprint;
}
