import { readFileSync } from 'node:fs';
import { join } from 'node:path';
import { packageRoot } from '../../runner/paths.js';
import { SLURM_SETTINGS } from '../../runner/slurm.js';
import { afterEach, describe, expect, it, vi } from 'vitest';
import { main } from '../../runner/cli.js';
import { messages } from '../../core/messages.js';
import { makeFolder, SMALL_RECIPE, smallData } from '../helpers.js';

function capture() {
  const out: string[] = [];
  const err: string[] = [];
  vi.spyOn(process.stdout, 'write').mockImplementation((s) => (out.push(String(s)), true));
  vi.spyOn(process.stderr, 'write').mockImplementation((s) => (err.push(String(s)), true));
  return { out: () => out.join(''), err: () => err.join('') };
}

afterEach(() => vi.restoreAllMocks());

describe('command line', () => {
  it('documents the exit codes in --help', async () => {
    const io = capture();
    expect(await main(['--help'])).toBe(0);
    expect(io.out()).toContain('Exit codes:\n  0  success (verify: reproduced)\n  1  the analysis failed');
    expect(io.out()).toContain('\n  2  bad usage or a bad recipe\n');
  });

  it('lists every Slurm option in --help, each beside its environment variable, as the README table does', async () => {
    const io = capture();
    expect(await main(['--help'])).toBe(0);
    const readme = readFileSync(join(packageRoot(), 'README.md'), 'utf8');
    for (const { option, env } of SLURM_SETTINGS) {
      expect(io.out()).toMatch(new RegExp(`\\n  --${option} \\S+ .*\\[${env}\\]\\n`));
      expect(readme).toMatch(new RegExp(`\\| \`--${option} [^|]*\\| \`${env}\` \\|`));
    }
  });

  it('exits 2 with a suggestion for an unknown command', async () => {
    const io = capture();
    expect(await main(['rnu', 'x.yaml'])).toBe(2);
    expect(io.err()).toBe(messages.usageUnknownCommand('rnu', 'run') + '\n');
  });

  it('exits 2 for an unknown option', async () => {
    const io = capture();
    expect(await main(['run', 'x.yaml', '--fast'])).toBe(2);
    expect(io.err()).toBe(messages.usageUnknownOption('--fast', 'run') + '\n');
  });

  it('exits 2 for a bad --workers value', async () => {
    const io = capture();
    expect(await main(['run', 'x.yaml', '--workers', 'two'])).toBe(2);
    expect(io.err()).toBe(messages.usageOptionValue('--workers', 'two', 'a whole number from 1 to 256') + '\n');
  });

  it('exits 2 when the recipe file does not exist', async () => {
    const io = capture();
    expect(await main(['check', 'nowhere/recipe.yaml'])).toBe(2);
    expect(io.err()).toBe(messages.recipeFileMissing('nowhere/recipe.yaml') + '\n');
  });

  it('check says ok for a good recipe and exits 2 for a bad one', async () => {
    const dir = makeFolder({ 'recipe.yaml': SMALL_RECIPE, 'bad.yaml': SMALL_RECIPE.replace('seed: 3', 'seed: -1'), 'data/obs.csv': smallData() });
    const io = capture();
    expect(await main(['check', join(dir, 'recipe.yaml')])).toBe(0);
    expect(io.out()).toContain(': ok (1 source, the first 1,000 rows of each read with the declared types; 2 models)');
    expect(await main(['check', join(dir, 'bad.yaml')])).toBe(2);
    expect(io.err()).toMatch(/bad\.yaml:3:7: seed is -1, but it must be at least 0/);
  });

  it('run exits 1 when the data are bad, and 0 when all is well', async () => {
    const dir = makeFolder({ 'recipe.yaml': SMALL_RECIPE, 'data/obs.csv': smallData().replace('\nS3,', '\nS3,x') });
    const io = capture();
    expect(await main(['run', join(dir, 'recipe.yaml'), '--cache', join(dir, 'c'), '--workers', '1'])).toBe(1);
    expect(io.err()).toMatch(/not a number/);
    const good = makeFolder({ 'recipe.yaml': SMALL_RECIPE, 'data/obs.csv': smallData() });
    expect(await main(['run', join(good, 'recipe.yaml'), '--cache', join(good, 'c'), '--workers', '1'])).toBe(0);
    expect(io.out()).toMatch(/^ran .* source obs/m);
    expect(io.out()).toMatch(/Report: .*report\.html/);
  });
});

describe('command line usage messages', () => {
  it('says an option needs its value', async () => {
    const io = capture();
    expect(await main(['run', 'x.yaml', '--out'])).toBe(2);
    // the first part is Node's own parseArgs wording
    expect(io.err()).toBe(messages.usageOptionNeedsValue("Option '--out <value>' argument missing", 'run') + '\n');
  });

  it('refuses extra arguments, naming them', async () => {
    const io = capture();
    expect(await main(['check', 'a.yaml', 'b.yaml'])).toBe(2);
    expect(io.err()).toBe(messages.usageTooManyArguments('check', 'a recipe file', ['a.yaml', 'b.yaml']) + '\n');
  });

  it('says when the data file for predict does not exist', async () => {
    const dir = makeFolder({ 'recipe.yaml': SMALL_RECIPE, 'data/obs.csv': smallData() });
    const io = capture();
    expect(await main(['run', join(dir, 'recipe.yaml'), '--cache', join(dir, 'c'), '--workers', '1'])).toBe(0);
    expect(await main(['predict', join(dir, 'out', 'small'), 'nowhere.csv', '--out', join(dir, 'p.csv')])).toBe(2);
    expect(io.err()).toBe(messages.dataFileMissing('nowhere.csv') + '\n');
  });
});
