import { spawnSync } from 'node:child_process';
import { existsSync, readFileSync } from 'node:fs';
import { dirname, join, relative, resolve, sep } from 'node:path';
import { fileURLToPath } from 'node:url';
import { hashValue, sha256 } from '../core/hash.js';
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
 * Where step outputs are computed: the step registry (every step kind and all it imports), and the
 * executor and thread worker that build a step's context, seed its generators and carry its output
 * through the codec. Their import closure is every file whose code can shape an output.
 */
export const OUTPUT_ENTRIES = ['steps/index', 'runner/execute', 'runner/step-worker', 'runner/task'];

/**
 * A hash of what computes the step outputs: dendrolog's version, the runtime dependency versions,
 * and the code of every file in the import closure of OUTPUT_ENTRIES, as loaded. It is part of
 * every step key, so a cache filled by other code is never reused, and verify can tell a software
 * change from a data change.
 */
export function softwareFingerprint(): string {
  if (fingerprint) return fingerprint;
  const root = join(dirname(fileURLToPath(import.meta.url)), '..');
  const env = environment();
  fingerprint = hashValue({ dendrolog: env.dendrolog, dependencies: env.dependencies, code: codeHashes(root, OUTPUT_ENTRIES) });
  return fingerprint;
}

/**
 * SHA-256 of every source file reachable from the entries through relative imports (static,
 * dynamic, and module URLs such as a worker's `new URL('./x.js', import.meta.url)`; not type-only
 * imports, which the compiler erases), keyed by its
 * path from root. Works on the TypeScript sources and on the compiled dist/ alike: an import of
 * `./x.js` is the file x.ts where that exists beside the importer.
 *
 * Example: `codeHashes('/src/dendrolog', ['steps/index'])` holds 'core/frame.ts'.
 */
export function codeHashes(root: string, entries: string[]): Record<string, string> {
  const ext = existsSync(join(root, `${entries[0]}.ts`)) ? '.ts' : '.js';
  const seen = new Map<string, string>();
  const queue = entries.map((e) => join(root, e + ext));
  while (queue.length > 0) {
    const file = queue.pop()!;
    const key = relative(root, file).split(sep).join('/');
    if (seen.has(key) || !existsSync(file)) continue;
    const text = readFileSync(file);
    seen.set(key, sha256(text));
    // type-only imports are erased from the compiled code: they shape no output
    const code = text.toString('utf8').replace(/^\s*(?:import|export)\s+type\s+(?:\*(?:\s+as\s+\w+)?|\{[^}]*\}|\w+)\s*from\s*['"][^'"]+['"]/gm, '');
    for (const m of code.matchAll(/['"](\.\.?\/[^'"\n]+?)\.js['"]/g)) {
      const base = resolve(dirname(file), m[1]);
      queue.push(existsSync(base + ext) ? base + ext : base + '.js');
    }
  }
  return Object.fromEntries([...seen].sort(([a], [b]) => (a < b ? -1 : a > b ? 1 : 0)));
}
