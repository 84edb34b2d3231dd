/**
 * Command-line conventions: help per command, --json documents (validated against
 * schemas/cli-output.v1.json), --quiet, plan on a cold and a warm cache, cache info / verify / prune,
 * DENDROLOG_CACHE, and predict to stdout.
 */
import { Ajv } from 'ajv';
import { existsSync, readFileSync, utimesSync, writeFileSync } from 'node:fs';
import { Cache } from '../../runner/cache.js';
import { messages } from '../../core/messages.js';
import { join } from 'node:path';
import { afterEach, describe, expect, it } from 'vitest';
import { COMMAND_HELP } from '../../runner/cli-help.js';
import { packageRoot } from '../../runner/paths.js';
import { cli, scenario } from '../hostile/harness.js';

const schema = JSON.parse(readFileSync(join(packageRoot(), 'schemas', 'cli-output.v1.json'), 'utf8')) as { definitions: Record<string, object> };
const ajv = new Ajv({ allErrors: true, strict: false });
ajv.addSchema(schema, 'cli');
/** The problems of a --json document against its definition; empty when it conforms. */
function problems(definition: string, text: string): string[] {
  const validate = ajv.getSchema(`cli#/definitions/${definition}`)!;
  return validate(JSON.parse(text)) ? [] : (validate.errors ?? []).map((e) => `${e.instancePath} ${e.message}`);
}

afterEach(() => {
  delete process.env.DENDROLOG_CACHE;
});

describe('help', () => {
  it('has a page per command, with examples, from "help COMMAND" and "COMMAND --help" alike', async () => {
    for (const command of ['run', 'check', 'plan', 'verify', 'compare', 'predict', 'cache']) {
      const a = await cli(['help', command]);
      const b = await cli([command, '--help']);
      expect(a.code).toBe(0);
      expect(a.out).toBe(COMMAND_HELP[command]);
      expect(b.out).toBe(a.out);
      expect(a.out.startsWith(`dendrolog ${command}`)).toBe(true);
      expect(a.out).toContain('\nExamples:\n  dendrolog ');
    }
    const unknown = await cli(['help', 'rnu']);
    expect(unknown.code).toBe(2);
    expect(unknown.err).toContain('did you mean "run"');
  });
});

describe('--json', () => {
  it('run: one document on stdout, the step lines on stderr; --quiet drops the step lines', async () => {
    const s = scenario();
    const r = await cli(['run', s.recipe, '--cache', s.cache, '--out', join(s.dir, 'out'), '--workers', '1', '--json']);
    expect(r.code).toBe(0);
    expect(problems('run', r.out)).toEqual([]);
    expect(JSON.parse(r.out).headline.model).toBe('linear');
    expect(r.err).toMatch(/^ran +\d/m);
    const quiet = await cli(['run', s.recipe, '--cache', s.cache, '--out', join(s.dir, 'out'), '--workers', '1', '--json', '--quiet']);
    expect(quiet.err).not.toMatch(/^(ran|cached) /m);
    expect(JSON.parse(quiet.out).steps.cached).toBe(JSON.parse(quiet.out).steps.total);
  });

  it('check, verify and compare: one document each; a failure is a document too', async () => {
    const s = scenario();
    const checked = await cli(['check', s.recipe, '--json']);
    expect(checked.code).toBe(0);
    expect(problems('check', checked.out)).toEqual([]);
    await cli(['run', s.recipe, '--cache', s.cache, '--out', join(s.dir, 'out'), '--workers', '1']);
    const verified = await cli(['verify', join(s.dir, 'out'), '--workers', '1', '--json', '--quiet']);
    expect(verified.code).toBe(0);
    expect(problems('verify', verified.out)).toEqual([]);
    const compared = await cli(['compare', join(s.dir, 'out'), join(s.dir, 'out'), '--json']);
    expect(problems('compare', compared.out)).toEqual([]);
    writeFileSync(join(s.dir, 'bad.yaml'), readFileSync(s.recipe, 'utf8').replace('seed: 3', 'seed: -1'));
    const failed = await cli(['check', join(s.dir, 'bad.yaml'), '--json']);
    expect(failed.code).toBe(2);
    expect(problems('failure', failed.out)).toEqual([]);
    expect(JSON.parse(failed.out).problems[0]).toMatch(/seed is -1/);
  });
});

describe('plan', () => {
  it('lists every step as "to run" on a cold cache and "cached" after a run, writing nothing', async () => {
    const s = scenario();
    const cold = await cli(['plan', s.recipe, '--cache', s.cache, '--json']);
    expect(problems('plan', cold.out)).toEqual([]);
    const steps = JSON.parse(cold.out).steps as { id: string; cached: boolean; key: string }[];
    expect(steps.length).toBeGreaterThan(10);
    expect(steps.every((x) => !x.cached)).toBe(true);
    expect(existsSync(s.cache)).toBe(false);
    await cli(['run', s.recipe, '--cache', s.cache, '--out', join(s.dir, 'out'), '--workers', '1']);
    const warm = await cli(['plan', s.recipe, '--cache', s.cache]);
    const lines = warm.out.trim().split('\n');
    expect(lines.at(-1)).toBe(`${steps.length} steps: ${steps.length} in the cache, 0 to run`);
    // the keys are the run's own
    const record = JSON.parse(readFileSync(join(s.dir, 'out', 'run-record.json'), 'utf8')) as { steps: { key: string }[] };
    expect(steps.map((x) => x.key)).toEqual(record.steps.map((x) => x.key));
    expect(lines[0]).toMatch(/^cached {2}[0-9a-f]{12} {2}source obs$/);
  });
});

describe('the cache command', () => {
  it('counts entries by kind, checks them, and prunes what no run record under a folder lists', async () => {
    const s = scenario({ 'other.yaml': '' });
    writeFileSync(join(s.dir, 'other.yaml'), readFileSync(s.recipe, 'utf8').replace('seed: 3', 'seed: 4').replace('name: small', 'name: other'));
    process.env.DENDROLOG_CACHE = s.cache;
    expect((await cli(['run', s.recipe, '--out', join(s.dir, 'keep', 'small'), '--workers', '1'])).code).toBe(0);
    expect((await cli(['run', join(s.dir, 'other.yaml'), '--out', join(s.dir, 'gone', 'other'), '--workers', '1'])).code).toBe(0);
    // entries of the last hour are never pruned (a run may still need them): these are made older
    for (const f of new Cache(s.cache).list()) utimesSync(f.path, new Date(Date.now() - 2 * 3_600_000), new Date(Date.now() - 2 * 3_600_000));
    const info = JSON.parse((await cli(['cache', '--json'])).out) as { entries: number; kinds: { kind: string }[] };
    expect(info.kinds.map((k) => k.kind)).toContain('fit');
    // the human listing counts one entry as one, not "1 entries"
    const listing = (await cli(['cache'])).out;
    const kinds = info.kinds as { kind: string; entries: number }[];
    const one = kinds.find((k) => k.entries === 1)!;
    const two = kinds.find((k) => k.entries === 2)!;
    expect(listing).toMatch(new RegExp(`^${one.kind} +1 entry  `, 'm'));
    expect(listing).toMatch(new RegExp(`^${two.kind} +2 entries `, 'm'));
    expect((await cli(['cache', 'verify'])).code).toBe(0);
    // a dry run removes nothing
    const dry = await cli(['cache', 'prune', '--unused-by', join(s.dir, 'keep'), '--dry-run']);
    expect(dry.out).toMatch(/would remove \d+ entries/);
    expect(JSON.parse((await cli(['cache', '--json'])).out).entries).toBe(info.entries);
    const pruned = await cli(['cache', 'prune', '--unused-by', join(s.dir, 'keep')]);
    expect(pruned.code).toBe(0);
    // everything the kept run lists is still there: its rerun takes every step from the cache
    const plan = JSON.parse((await cli(['plan', s.recipe, '--json'])).out) as { steps: { cached: boolean }[] };
    expect(plan.steps.every((x) => x.cached)).toBe(true);
    const other = JSON.parse((await cli(['plan', join(s.dir, 'other.yaml'), '--json'])).out) as { steps: { cached: boolean }[] };
    expect(other.steps.some((x) => !x.cached)).toBe(true);
    // a rule is required, and --unused-by must name a folder holding run records: a slip never empties the cache
    expect((await cli(['cache', 'prune'])).code).toBe(2);
    const typo = await cli(['cache', 'prune', '--unused-by', join(s.dir, 'kep')]);
    expect([typo.code, typo.err]).toEqual([2, messages.cachePruneNotAFolder(join(s.dir, 'kep')) + '\n']);
    const empty = await cli(['cache', 'prune', '--unused-by', join(s.dir, 'data')]);
    expect([empty.code, empty.err]).toEqual([2, messages.cachePruneNoRecords(join(s.dir, 'data')) + '\n']);
    expect((await cli(['cache', 'prune', '--older-than', ''])).code).toBe(2);
    // an entry changed by hand is named by verify, which removes nothing
    const record = JSON.parse(readFileSync(join(s.dir, 'keep', 'small', 'run-record.json'), 'utf8')) as { steps: { kind: string; key: string }[] };
    const holdout = record.steps.find((x) => x.kind === 'holdout')!;
    const entry = join(s.cache, 'holdout', holdout.key);
    const bytes = readFileSync(entry);
    bytes[bytes.length - 1] ^= 1;
    writeFileSync(entry, bytes);
    const checked = await cli(['cache', 'verify']);
    expect(checked.code).toBe(1);
    expect(checked.err).toContain(`${holdout.key} fails its checksum`);
    expect(existsSync(entry)).toBe(true);
    // a run's entries of the last hour stay even with --older-than 0; the older ones go
    await cli(['run', join(s.dir, 'other.yaml'), '--out', join(s.dir, 'gone', 'other'), '--workers', '1']);
    const recent = new Cache(s.cache).list().filter((f) => f.mtimeMs > Date.now() - 3_600_000);
    expect(recent.length).toBeGreaterThan(0);
    expect((await cli(['cache', 'prune', '--older-than', '0'])).code).toBe(0);
    expect(new Cache(s.cache).list().map((f) => f.key)).toEqual(recent.map((f) => f.key));
  });
});

describe('predict to stdout', () => {
  it('writes the CSV to stdout and the summary to stderr with --out -', async () => {
    const s = scenario();
    await cli(['run', s.recipe, '--cache', s.cache, '--out', join(s.dir, 'out'), '--workers', '1']);
    const r = await cli(['predict', join(s.dir, 'out'), join(s.dir, 'data', 'obs.csv'), '--out', '-']);
    expect(r.code).toBe(0);
    expect(r.out.split('\n')[0]).toMatch(/^site,x1,x2,y,/);
    expect(r.out.trim().split('\n')).toHaveLength(61);
    expect(r.err).toMatch(/^60 of 60 rows predicted/);
    expect(r.err).toMatch(/\nPredictions: written to stdout\n$/);
    expect(existsSync(join(s.dir, '-'))).toBe(false);
  });
});
