/**
 * The bad-input suite's harness: a scenario folder holding a recipe and its data, the command line
 * run in-process with its output captured, and a hash of every file in the folder before and after,
 * so each case can show that nothing outside the run folder (and the cache dendrolog made) changed.
 */
import { createHash } from 'node:crypto';
import { existsSync, lstatSync, readdirSync, readFileSync, readlinkSync } from 'node:fs';
import { join, relative, sep } from 'node:path';
import { expect, vi } from 'vitest';
import { main } from '../../runner/cli.js';
import { makeFolder, SMALL_RECIPE, smallData } from '../helpers.js';

/** Every file and link under dir, as relative path → SHA-256 of its bytes (or of a link's target). */
export function treeHash(dir: string): Map<string, string> {
  const out = new Map<string, string>();
  if (!existsSync(dir)) return out;
  const walk = (d: string) => {
    for (const name of readdirSync(d).sort()) {
      const p = join(d, name);
      const st = lstatSync(p);
      const rel = relative(dir, p).split(sep).join('/');
      if (st.isSymbolicLink()) out.set(rel, 'link:' + readlinkSync(p));
      else if (st.isDirectory()) {
        out.set(rel + '/', 'dir');
        walk(p);
      } else out.set(rel, createHash('sha256').update(readFileSync(p)).digest('hex'));
    }
  };
  walk(dir);
  return out;
}

/**
 * Asserts that every file present before is still there with the same bytes, and that new files
 * appeared only under the given prefixes (relative paths, such as 'out/small/' or 'cache/').
 */
export function expectOnlyChangedUnder(before: Map<string, string>, after: Map<string, string>, allowed: string[] = []): void {
  const ok = (p: string) => allowed.some((a) => p === a || p.startsWith(a.endsWith('/') ? a : a + '/') || p + '/' === a);
  const changed: string[] = [];
  for (const [p, h] of before) if (!ok(p) && after.get(p) !== h) changed.push(`${p} ${after.has(p) ? 'changed' : 'removed'}`);
  // a folder made on the way to an allowed one (out/ for out/small/) is fine
  const onTheWay = (p: string) => p.endsWith('/') && allowed.some((a) => a.startsWith(p));
  for (const p of after.keys()) if (!ok(p) && !onTheWay(p) && !before.has(p)) changed.push(`${p} added`);
  expect(changed).toEqual([]);
}

export interface CliResult {
  code: number;
  out: string;
  err: string;
}

/** Runs the command line in-process and returns its exit code and what it printed. */
export async function cli(argv: string[]): Promise<CliResult> {
  const out: string[] = [];
  const err: string[] = [];
  const o = vi.spyOn(process.stdout, 'write').mockImplementation((s) => (out.push(String(s)), true));
  const e = vi.spyOn(process.stderr, 'write').mockImplementation((s) => (err.push(String(s)), true));
  try {
    const code = await main(argv);
    return { code, out: out.join(''), err: err.join('') };
  } finally {
    o.mockRestore();
    e.mockRestore();
  }
}

/** A scenario folder: the recipe (default SMALL_RECIPE) at recipe.yaml, its data, and any extra files. */
export function scenario(files: Record<string, string> = {}): { dir: string; recipe: string; cache: string } {
  const dir = makeFolder({ 'recipe.yaml': SMALL_RECIPE, 'data/obs.csv': smallData(), ...files });
  return { dir, recipe: join(dir, 'recipe.yaml'), cache: join(dir, 'cache') };
}

/**
 * Runs argv in a scenario folder and checks the outcome: the exit code, that stderr holds the
 * expected message, that no "unexpected internal error" appeared, and that files changed only
 * under `changes` (relative to the folder; the cache folder always may).
 */
export async function expectOutcome(
  dir: string,
  argv: string[],
  want: { code: number; err?: string | RegExp; changes?: string[] },
): Promise<CliResult> {
  const before = treeHash(dir);
  const r = await cli(argv);
  expect(r.err).not.toContain('unexpected internal error');
  if (want.err !== undefined) {
    if (typeof want.err === 'string') expect(r.err).toContain(want.err);
    else expect(r.err).toMatch(want.err);
  }
  expect(r.code, `exit code; stderr: ${r.err}`).toBe(want.code);
  expectOnlyChangedUnder(before, treeHash(dir), ['cache/', ...(want.changes ?? [])]);
  return r;
}

/** 1-based line and column of the first occurrence of needle in text, as "line:column". */
export function lineColOf(text: string, needle: string): string {
  const lines = text.split('\n');
  const i = lines.findIndex((l) => l.includes(needle));
  if (i < 0) throw new Error(`no line holds ${needle}`);
  return `${i + 1}:${lines[i].indexOf(needle) + 1}`;
}
