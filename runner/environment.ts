import { spawnSync } from 'node:child_process';
import { existsSync, readFileSync } from 'node:fs';
import { join } from 'node:path';
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
