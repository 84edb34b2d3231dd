/**
 * dendrolog as others install it: `npm pack`, then the tarball installed into an empty project and
 * globally (into a temporary prefix), the demo recipe run from there with `npx dendrolog`, and the
 * library imported by its package name.
 */
import { spawnSync } from 'node:child_process';
import { cpSync, existsSync, mkdirSync, mkdtempSync, readdirSync, rmSync, writeFileSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { join, resolve } from 'node:path';
import { afterAll, beforeAll, describe, expect, it } from 'vitest';

const root = resolve(import.meta.dirname, '..', '..');
const SLOW = 240_000;

function sh(cmd: string, args: string[], cwd: string) {
  const r = spawnSync(cmd, args, { cwd, encoding: 'utf8', env: { ...process.env, npm_config_audit: 'false', npm_config_fund: 'false', npm_config_update_notifier: 'false' } });
  return { code: r.status, out: r.stdout, err: r.stderr };
}

describe('the packed tarball', () => {
  let work: string;
  let tarball: string;
  beforeAll(() => {
    work = mkdtempSync(join(tmpdir(), 'dendrolog-package-'));
    // dist/ is already built by `npm test`; packing needs no second build
    const packed = sh('npm', ['pack', '--ignore-scripts', '--pack-destination', work], root);
    expect(packed.code, packed.err).toBe(0);
    tarball = join(work, readdirSync(work).find((f) => f.endsWith('.tgz'))!);
  }, SLOW);
  afterAll(() => rmSync(work, { recursive: true, force: true }));

  it('installs into an empty project, runs the demo recipe copied there, and imports as a library', () => {
    const project = join(work, 'project');
    mkdirSync(project);
    writeFileSync(join(project, 'package.json'), JSON.stringify({ name: 'my-analysis', private: true, type: 'module' }));
    const installed = sh('npm', ['install', '--prefer-offline', tarball], project);
    expect(installed.code, installed.err).toBe(0);
    expect(installed.err).not.toMatch(/EBADENGINE|Unsupported engine/);
    cpSync(join(project, 'node_modules', 'dendrolog', 'recipes', 'lake-chlorophyll'), join(project, 'analysis'), { recursive: true });
    const run = sh('npx', ['dendrolog', 'run', 'analysis/lake-chlorophyll.yaml', '--workers', '2'], project);
    expect(run.code, run.err).toBe(0);
    expect(run.out).toContain('Report: analysis/out/lake-chlorophyll/report.html');
    for (const f of ['report.html', 'run-record.json', 'model.dendro']) expect(existsSync(join(project, 'analysis', 'out', 'lake-chlorophyll', f))).toBe(true);
    const lib = sh(process.execPath, ['--input-type=module', '-e', "const d = await import('dendrolog'); console.log(Object.keys(d).sort().join(' '))"], project);
    expect(lib.code, lib.err).toBe(0);
    expect(lib.out.trim()).toBe('DendrologError check compare predict run verify');
    const checked = sh(process.execPath, ['--input-type=module', '-e', "const { check } = await import('dendrolog'); console.log(JSON.stringify(await check('analysis/lake-chlorophyll.yaml')))"], project);
    expect(JSON.parse(checked.out)).toEqual({ sources: 2, models: 4 });
    // predict through the library, with a model other than the headline
    const script = "const { predict } = await import('dendrolog'); const s = await predict('analysis/out/lake-chlorophyll', 'analysis/data/samples.csv', 'linear.csv', { model: 'linear' }); console.log(JSON.stringify([s.model, s.headline, s.rows, s.predicted + s.notPredicted]))";
    const predicted = sh(process.execPath, ['--input-type=module', '-e', script], project);
    expect(predicted.code, predicted.err).toBe(0);
    const [model, headline, rows, lines] = JSON.parse(predicted.out) as [string, string, number, number];
    expect([model, headline, lines]).toEqual(['linear', 'forest', rows]);
    expect(existsSync(join(project, 'linear.csv'))).toBe(true);
  }, SLOW);

  it('installs globally and answers --version and help', () => {
    const prefix = join(work, 'global');
    const installed = sh('npm', ['install', '--global', '--prefer-offline', '--prefix', prefix, tarball], work);
    expect(installed.code, installed.err).toBe(0);
    const version = sh(join(prefix, 'bin', 'dendrolog'), ['--version'], work);
    expect(version.code, version.err).toBe(0);
    expect(version.out.trim()).toMatch(/^\d+\.\d+\.\d+/);
    expect(sh(join(prefix, 'bin', 'dendrolog'), ['help', 'check'], work).out).toContain('dendrolog check RECIPE');
  }, SLOW);
});
