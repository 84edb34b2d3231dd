import { spawnSync } from 'node:child_process';
import { cpSync, existsSync, mkdtempSync, readFileSync, rmSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { join, resolve } from 'node:path';
import { afterAll, beforeAll, describe, expect, it } from 'vitest';

const root = resolve(import.meta.dirname, '..', '..');
const bin = join(root, 'bin', 'dendrolog.js');

/** Runs the built command line as a user would, with output to a pipe (not a terminal). */
function dendrolog(args: string[], cwd: string) {
  const r = spawnSync(process.execPath, [bin, ...args], { cwd, encoding: 'utf8' });
  return { code: r.status, out: r.stdout, err: r.stderr };
}

describe('the demo recipe, end to end through the built command', () => {
  let work: string;
  let first: ReturnType<typeof dendrolog>;
  let second: ReturnType<typeof dendrolog>;
  let firstManifest: Record<string, unknown>;

  afterAll(() => rmSync(work, { recursive: true, force: true }));

  beforeAll(() => {
    if (!existsSync(join(root, 'dist', 'runner', 'cli.js'))) throw new Error('dist/ is missing: run "npm run build" first (npm test does)');
    work = mkdtempSync(join(tmpdir(), 'dendrolog-demo-'));
    cpSync(join(root, 'recipes', 'lake-chlorophyll'), join(work, 'lake'), {
      recursive: true,
      filter: (src) => !src.includes(`${join('lake-chlorophyll', 'out')}`),
    });
    first = dendrolog(['run', 'lake/recipe.yaml', '--cache', 'cache'], work);
    firstManifest = JSON.parse(readFileSync(join(work, 'lake', 'out', 'lake-chlorophyll', 'manifest.json'), 'utf8'));
    second = dendrolog(['run', 'lake/recipe.yaml', '--cache', 'cache'], work);
  });

  it('runs, prints one plain line per step, and says where the report is', () => {
    expect(first.err).toBe('');
    expect(first.code).toBe(0);
    expect(first.out).not.toContain('\r');
    expect(first.out).toMatch(/^ran +\d+\.\d\d s {2}source samples/m);
    expect(first.out).toContain('Report: lake/out/lake-chlorophyll/report.html');
    for (const f of ['report.html', 'summary.md', 'manifest.json']) expect(existsSync(join(work, 'lake', 'out', 'lake-chlorophyll', f))).toBe(true);
  });

  it('takes every step from the cache the second time', () => {
    expect(second.code).toBe(0);
    const stepLines = second.out.split('\n').filter((l) => /^(ran|cached) /.test(l));
    expect(stepLines.length).toBe((firstManifest.steps as unknown[]).length);
    expect(stepLines.every((l) => l.startsWith('cached'))).toBe(true);
  });

  it('writes an identical manifest apart from the timing block', () => {
    const again = JSON.parse(readFileSync(join(work, 'lake', 'out', 'lake-chlorophyll', 'manifest.json'), 'utf8'));
    expect({ ...again, timing: null }).toEqual({ ...firstManifest, timing: null });
  });

  it('holds the demo headline to what the invented data allow: the forest beats both baselines on the holdout', () => {
    const models = firstManifest.models as { name: string; metrics: { holdout: { r2: { value: number } } }; skill: Record<string, number> }[];
    const forest = models.find((m) => m.name === 'forest')!;
    expect(forest.skill.mean).toBeGreaterThan(0.5);
    expect(forest.skill.linear).toBeGreaterThan(0);
    expect((firstManifest.headline as { label: string }).label).toBe('holdout');
  });
});
