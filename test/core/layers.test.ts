/**
 * The folders lean one way: core/ under everything, steps/ and models/ on core/, runner/ on steps/
 * only through the step registry. A change that crosses a line fails here, naming the import.
 */
import { readdirSync, readFileSync } from 'node:fs';
import { join, relative, resolve, sep } from 'node:path';
import { describe, expect, it } from 'vitest';
import { packageRoot } from '../../runner/paths.js';

const root = packageRoot();

/** Every relative import in the .ts files under a folder, as [importing file, imported file], both from the root. */
function importsUnder(folder: string): [string, string][] {
  const out: [string, string][] = [];
  const walk = (dir: string) => {
    for (const e of readdirSync(dir, { withFileTypes: true })) {
      const p = join(dir, e.name);
      if (e.isDirectory()) walk(p);
      else if (e.name.endsWith('.ts') && !e.name.endsWith('.d.ts')) {
        for (const m of readFileSync(p, 'utf8').matchAll(/from '(\.{1,2}\/[^']+)\.js'/g)) {
          const target = relative(root, resolve(dir, m[1])).split(sep).join('/');
          out.push([relative(root, p).split(sep).join('/'), target]);
        }
      }
    }
  };
  walk(join(root, folder));
  return out;
}

const crossing = (folder: string, allowed: (target: string) => boolean) =>
  importsUnder(folder)
    .filter(([, t]) => !allowed(t))
    .map(([f, t]) => `${f} imports ${t}`);

describe('layers', () => {
  it('keep core/ free of runner/, steps/ and models/', () => {
    expect(crossing('core', (t) => t.startsWith('core/'))).toEqual([]);
  });

  it('keep models/ free of recipes: it imports only models/', () => {
    expect(crossing('models', (t) => t.startsWith('models/'))).toEqual([]);
  });

  it('keep steps/ off runner/', () => {
    expect(crossing('steps', (t) => !t.startsWith('runner/'))).toEqual([]);
  });

  it('let runner/ reach steps/ only through the registry (and the pool threads through their list of kinds)', () => {
    expect(crossing('runner', (t) => !t.startsWith('steps/') || t === 'steps/index' || t === 'steps/pool-kinds')).toEqual([]);
  });
});

/**
 * The modules a file loads before it runs: its static value imports (not `import type`, not
 * `import()`), followed through relative paths; packages are named as they are imported.
 */
function staticallyLoaded(file: string): Set<string> {
  const seen = new Set<string>();
  const visit = (rel: string) => {
    if (seen.has(rel)) return;
    seen.add(rel);
    const text = readFileSync(join(root, `${rel}.ts`), 'utf8');
    for (const m of text.matchAll(/^import (?!type )[^;]*? from '([^']+)';/gms)) {
      const spec = m[1];
      if (spec.startsWith('.')) visit(relative(root, resolve(join(root, rel), '..', spec.replace(/\.js$/, ''))).split(sep).join('/'));
      else seen.add(spec);
    }
  };
  visit(file);
  return seen;
}

describe('start-up', () => {
  it('loads no report code (vega, vega-lite, handlebars) for commands that draw nothing: run imports it on demand', () => {
    const loaded = staticallyLoaded('runner/cli');
    // the walk does follow imports: the command line reaches the recipe reader and the YAML package
    expect(loaded.has('runner/recipe')).toBe(true);
    expect(loaded.has('yaml')).toBe(true);
    expect([...loaded].filter((m) => /^(vega|vega-lite|handlebars)$|^runner\/(plots|render)$/.test(m))).toEqual([]);
  });

  it('loads no step kind, file reader or arquero in a pool thread before it has a job: kinds come on demand', () => {
    const loaded = staticallyLoaded('runner/step-worker');
    // the walk reaches the worker's own imports
    expect(loaded.has('steps/pool-kinds')).toBe(true);
    expect([...loaded].filter((m) => /^arquero|^hyparquet|^netcdfjs|^steps\/(?!pool-kinds)/.test(m))).toEqual([]);
  });

  it('loads no arquero and no file-format package for the steps that grow and explain forests', () => {
    for (const kind of ['steps/cross-validate', 'steps/fit', 'steps/interval-fold', 'steps/explain']) {
      expect([...staticallyLoaded(kind)].filter((m) => /^(arquero|hyparquet|netcdfjs)/.test(m)), kind).toEqual([]);
    }
  });
});
