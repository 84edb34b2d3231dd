import { readFileSync } from 'node:fs';
import { createRequire } from 'node:module';
import { dirname, join } from 'node:path';
import { pathToFileURL } from 'node:url';
import { Worker } from 'node:worker_threads';

/**
 * Starts a worker thread on a module given by its compiled URL (`new URL('./x.js', import.meta.url)`).
 * Compiled code (dist/**.js) runs that file directly. Under vitest the caller is the .ts source; the
 * worker is then the .ts file loaded through tsx's loader. Node 20 ignores
 * `execArgv: ['--import', 'tsx']` for a worker's entry module (it fails with "Unknown file extension
 * .ts"), so a two-line bootstrap registers tsx's ESM loader and then imports the worker.
 *
 * Example: `startModuleWorker(new URL('./forest-worker.js', import.meta.url), import.meta.url)`
 */
export function startModuleWorker(entry: URL, caller: string): Worker {
  if (caller.endsWith('.ts')) {
    const source = entry.href.replace(/\.js$/, '.ts');
    const bootstrap = `import(${JSON.stringify(tsxEsmApi(caller))})\n  .then((tsx) => { tsx.register(); return import(${JSON.stringify(source)}); });`;
    return new Worker(bootstrap, { eval: true });
  }
  return new Worker(entry);
}

/** File URL of tsx's ESM loader API (its package.json "exports" entry), found from the caller. */
function tsxEsmApi(from: string): string {
  const require = createRequire(from);
  const pkgPath = require.resolve('tsx/package.json');
  const pkg = JSON.parse(readFileSync(pkgPath, 'utf8')) as { exports: Record<string, { import: { default: string } }> };
  return pathToFileURL(join(dirname(pkgPath), pkg.exports['./esm/api'].import.default)).href;
}
