/**
 * Bad input around the cache and a run folder's model.dendro: entries copied between keys, damaged,
 * undecodable or of an older format; a cache folder that cannot be written; a model file that is
 * truncated, edited or another run's. Each case checks the exit code, the catalogued message and
 * that nothing outside the run folder and the cache changed.
 */
import { copyFileSync, existsSync, readdirSync, readFileSync, truncateSync, writeFileSync } from 'node:fs';
import { join } from 'node:path';
import { describe, expect, it } from 'vitest';
import { Cache } from '../../runner/cache.js';
import { sha256 } from '../../core/hash.js';
import type { Manifest } from '../../runner/manifest.js';
import { messages } from '../../core/messages.js';
import { silentProgress } from '../../runner/progress.js';
import { displayOf, loadRecipe } from '../../runner/recipe.js';
import { executeRecipe } from '../../runner/run.js';
import { SMALL_RECIPE } from '../helpers.js';
import { cli, expectOutcome, scenario } from './harness.js';

type Scenario = ReturnType<typeof scenario>;

const runArgs = (s: Scenario, workers = 1) => ['run', s.recipe, '--cache', s.cache, '--workers', String(workers)];
const manifestOf = (s: Scenario): Manifest => JSON.parse(readFileSync(join(s.dir, 'out/small/run-record.json'), 'utf8')) as Manifest;
/** The entry file of the step with this key in the scenario's last run. */
const entryPath = (s: Scenario, key: string) => join(s.cache, manifestOf(s).steps.find((st) => st.key === key)!.kind, key);
const stepOf = (m: Manifest, id: string) => m.steps.find((x) => x.id === id)!;
const statusOf = (m: Manifest, id: string) => m.timing.steps.find((x) => x.id === id)!.status;
const withoutTiming = (m: Manifest) => ({ ...m, timing: null });

/** A scenario already run once, so its cache holds every step. */
async function warmScenario(workers = 1): Promise<{ s: Scenario; first: Manifest }> {
  const s = scenario();
  const r = await cli(runArgs(s, workers));
  expect(r.code).toBe(0);
  return { s, first: manifestOf(s) };
}

/** Reruns, expecting success with the given warning both printed and in the manifest; returns the manifest. */
async function rerunWarning(s: Scenario, code: string, message: string, workers = 1): Promise<Manifest> {
  const r = await expectOutcome(s.dir, runArgs(s, workers), { code: 0, changes: ['out/small/'] });
  expect(r.out).toContain(message);
  const m = manifestOf(s);
  expect(m.warnings).toContainEqual({ code, message, count: 1 });
  return m;
}

/** Warnings about the cache in a manifest (a run may have others, about its data). */
const cacheWarnings = (m: Manifest) => m.warnings.filter((w) => w.code.startsWith('cache-'));

/** A third run takes every step from the cache and warns about nothing in it. */
async function expectCleanWarmRun(s: Scenario, first: Manifest): Promise<void> {
  const r = await expectOutcome(s.dir, runArgs(s), { code: 0, changes: ['out/small/'] });
  expect(r.out).not.toContain('cache entry');
  const m = manifestOf(s);
  expect(cacheWarnings(m)).toEqual([]);
  expect(m.timing.steps.every((x) => x.status === 'cached')).toBe(true);
  expect(withoutTiming(m)).toEqual(withoutTiming(first));
}

const tempFiles = (dir: string): string[] =>
  existsSync(dir) ? readdirSync(dir, { recursive: true, encoding: 'utf8' }).filter((f) => f.includes('.tmp-')) : [];

describe('cache entries bound to their key', () => {
  it('detects an entry copied over another key, recomputes that step and gives the first run’s outputs', async () => {
    const { s, first } = await warmScenario();
    // both fits are JSON of the same shape: served silently, "fit linear" would become the mean model
    const linear = stepOf(first, 'fit linear').key;
    const mean = stepOf(first, 'fit mean').key;
    copyFileSync(entryPath(s, mean), entryPath(s, linear));
    const second = await rerunWarning(s, 'cache-other-key', messages.cacheEntryOtherKey('fit linear', linear, mean));
    expect(second.steps).toEqual(first.steps);
    expect(second.models).toEqual(first.models);
    expect(statusOf(second, 'fit linear')).toBe('ran');
    expect(statusOf(second, 'fit mean')).toBe('cached');
    await expectCleanWarmRun(s, first);
  });

  it('detects swapped entries among steps that run side by side on threads', async () => {
    const { s, first } = await warmScenario(2);
    const a = stepOf(first, 'cv linear no hyperparameters');
    const b = stepOf(first, 'cv mean no hyperparameters');
    const bytesA = readFileSync(entryPath(s, a.key));
    copyFileSync(entryPath(s, b.key), entryPath(s, a.key));
    writeFileSync(entryPath(s, b.key), bytesA);
    const r = await expectOutcome(s.dir, runArgs(s, 2), { code: 0, changes: ['out/small/'] });
    expect(r.out).toContain(messages.cacheEntryOtherKey(a.id, a.key, b.key));
    expect(r.out).toContain(messages.cacheEntryOtherKey(b.id, b.key, a.key));
    const second = manifestOf(s);
    expect(second.steps).toEqual(first.steps);
    expect([statusOf(second, a.id), statusOf(second, b.id)]).toEqual(['ran', 'ran']);
  });

  it('recomputes an entry whose body passes its checksum but does not decode, instead of failing every later run', async () => {
    const { s, first } = await warmScenario();
    const table = stepOf(first, 'model table').key;
    const cache = new Cache(s.cache);
    const at = { kind: 'model_table', key: table, codec: 'frame' } as const;
    const got = cache.get(at);
    expect(got.status).toBe('hit');
    // the frame's last value cut off, stored again with a checksum of the shortened bytes
    const short = got.status === 'hit' ? got.bytes.subarray(0, got.bytes.length - 8) : new Uint8Array();
    expect(cache.put(at, short)).toEqual({ stored: true });
    const r = await expectOutcome(s.dir, runArgs(s), { code: 0, changes: ['out/small/'] });
    // the decoder's own words fill the middle of the message
    const [before, after] = messages.cacheEntryUndecodable('model table', table, '\u0000').split('\u0000');
    const lines = r.out.split('\n').filter((l) => l.startsWith(before));
    expect(lines).toHaveLength(1);
    expect(lines[0].endsWith(after)).toBe(true);
    const second = manifestOf(s);
    expect(cacheWarnings(second)).toEqual([{ code: 'cache-undecodable', message: lines[0], count: 1 }]);
    expect(second.steps).toEqual(first.steps);
    expect(statusOf(second, 'model table')).toBe('ran');
    await expectCleanWarmRun(s, first);
  });

  it('recomputes a truncated entry as failing its checksum', async () => {
    const { s, first } = await warmScenario();
    const key = stepOf(first, 'source obs').key;
    truncateSync(entryPath(s, key), 150);
    const second = await rerunWarning(s, 'cache-corrupt', messages.cacheCorrupt(key));
    expect(second.steps).toEqual(first.steps);
    expect(statusOf(second, 'source obs')).toBe('ran');
  });

  it('recomputes an entry cut off inside its header', async () => {
    const { s, first } = await warmScenario();
    const key = stepOf(first, 'holdout').key;
    truncateSync(entryPath(s, key), 40);
    const second = await rerunWarning(s, 'cache-corrupt', messages.cacheCorrupt(key));
    expect(statusOf(second, 'holdout')).toBe('ran');
  });

  it('quietly replaces an entry in the previous format (checksum line, then the output)', async () => {
    const { s, first } = await warmScenario();
    const key = stepOf(first, 'folds').key;
    const got = new Cache(s.cache).get({ kind: 'folds', key, codec: 'json' });
    expect(got.status).toBe('hit');
    const payload = got.status === 'hit' ? Buffer.from(got.bytes) : Buffer.alloc(0);
    writeFileSync(entryPath(s, key), Buffer.concat([Buffer.from(sha256(payload) + '\n', 'latin1'), payload]));
    const r = await expectOutcome(s.dir, runArgs(s), { code: 0, changes: ['out/small/'] });
    expect(r.out).not.toContain('cache entry');
    expect(cacheWarnings(manifestOf(s))).toEqual([]);
    expect(statusOf(manifestOf(s), 'folds')).toBe('ran');
    expect(readFileSync(entryPath(s, key)).subarray(0, 22).toString('latin1')).toBe('dendrolog-cache-entry ');
    await expectCleanWarmRun(s, first);
  });

  it('warns about an entry in a format it does not know and recomputes it', async () => {
    const { s, first } = await warmScenario();
    const key = stepOf(first, 'choose linear').key;
    writeFileSync(entryPath(s, key), 'dendrolog-cache-entry 99\nsomething newer\n');
    const second = await rerunWarning(s, 'cache-unknown-format', messages.cacheEntryUnknownFormat('choose linear', key, 'dendrolog-cache-entry 99'));
    expect(second.steps).toEqual(first.steps);
  });
});

describe('a cache folder that cannot be written', () => {
  it('goes on without storing when the cache path lies under a file, with one warning line', async () => {
    const s = scenario({ 'not-a-folder': 'x\n' });
    const cache = join(s.dir, 'not-a-folder', 'cache');
    const r = await expectOutcome(s.dir, ['run', s.recipe, '--cache', cache, '--workers', '1'], { code: 0, changes: ['out/small/'] });
    const message = messages.cacheUnwritable(displayOf(cache), 'ENOTDIR');
    // one line as it happens, not one per step, and the same warning once in the closing list
    expect(r.out.split('\n').filter((l) => l.includes('cannot write to the cache folder'))).toEqual([message, `warning: ${message}`]);
    const m = manifestOf(s);
    expect(m.warnings).toContainEqual({ code: 'cache-unwritable', message, count: 1 });
    expect(m.timing.steps.every((x) => x.status === 'ran')).toBe(true);
    expect(readFileSync(join(s.dir, 'not-a-folder'), 'utf8')).toBe('x\n');
  });

  it('goes on without storing when the cache path is a file', async () => {
    const s = scenario({ 'cache-file': 'x\n' });
    const cache = join(s.dir, 'cache-file');
    const r = await expectOutcome(s.dir, ['run', s.recipe, '--cache', cache, '--workers', '2'], { code: 0, changes: ['out/small/'] });
    const message = messages.cacheUnwritable(displayOf(cache), 'ENOTDIR');
    expect(r.out.split('\n').filter((l) => l.includes('cannot write to the cache folder'))).toEqual([message, `warning: ${message}`]);
  });
});

describe('a full disk under the cache', () => {
  it('stores nothing after the first ENOSPC, says so once, leaves no temporary file, and computes the same outputs', async () => {
    const s = scenario();
    const { recipe, origin } = loadRecipe(s.recipe, { checkFiles: true });
    let writes = 0;
    const full = new Cache(s.cache, {
      // the disk fills during the third entry: a partial temporary file, then ENOSPC
      writeChunksSync: (p, chunks) => {
        if (++writes < 3) return writeFileSync(p, Buffer.concat(chunks));
        writeFileSync(p, chunks[0].subarray(0, 7));
        throw Object.assign(new Error('ENOSPC: no space left on device, write'), { code: 'ENOSPC' });
      },
    });
    const lines: string[] = [];
    const { execution } = await executeRecipe(recipe, origin, { cache: full, workers: 1, progress: silentProgress(lines) });
    const message = messages.cacheUnwritable(displayOf(s.cache), 'ENOSPC');
    expect(lines.filter((l) => l.includes('cannot write to the cache folder'))).toEqual([message]);
    expect(execution.warnings).toContainEqual({ code: 'cache-unwritable', message, count: 1 });
    expect(writes).toBe(3);
    expect(tempFiles(s.cache)).toEqual([]);
    const stored = readdirSync(s.cache, { recursive: true, encoding: 'utf8' }).filter((f) => /[0-9a-f]{64}$/.test(f));
    expect(stored).toHaveLength(2);
    const clean = await executeRecipe(recipe, origin, { cache: null, workers: 1, progress: silentProgress() });
    expect(execution.records.map((r) => r.output)).toEqual(clean.execution.records.map((r) => r.output));
  });
});

describe('model.dendro of a run folder', () => {
  const predictArgs = (s: Scenario) => ['predict', join(s.dir, 'out/small'), join(s.dir, 'data/obs.csv'), '--out', join(s.dir, 'pred.csv')];
  const modelPath = (s: Scenario) => join(s.dir, 'out/small/model.dendro');

  it('predict refuses a truncated model.dendro, naming the file and both sizes', async () => {
    const { s, first } = await warmScenario();
    const full = readFileSync(modelPath(s)).length;
    truncateSync(modelPath(s), 20);
    expect(first.modelFile).toEqual({ file: 'model.dendro', sha256: expect.stringMatching(/^[0-9a-f]{64}$/), bytes: full });
    await expectOutcome(s.dir, predictArgs(s), { code: 1, err: messages.modelFileTruncated(displayOf(modelPath(s)), 20, full) });
  });

  it('predict refuses another run’s model.dendro copied into the run folder', async () => {
    const { s, first } = await warmScenario();
    const other = scenario({ 'recipe.yaml': SMALL_RECIPE.replace('seed: 3', 'seed: 4').replace('linear: {kind: linear}\n', '') });
    expect((await cli(['run', other.recipe, '--cache', other.cache, '--workers', '1'])).code).toBe(0);
    const foreign = readFileSync(join(other.dir, 'out/small/model.dendro'));
    writeFileSync(modelPath(s), foreign);
    await expectOutcome(s.dir, predictArgs(s), {
      code: 1,
      err: messages.modelFileChanged(displayOf(modelPath(s)), first.modelFile!.sha256, sha256(foreign)),
    });
  });

  it('verify reports a changed model.dendro and says not reproduced', async () => {
    const { s, first } = await warmScenario();
    const bytes = readFileSync(modelPath(s));
    bytes[bytes.length - 5] ^= 0xff;
    writeFileSync(modelPath(s), bytes);
    const r = await expectOutcome(s.dir, ['verify', join(s.dir, 'out/small'), '--workers', '1'], { code: 1 });
    expect(r.out).toContain('not reproduced');
    expect(r.out).toContain(messages.modelFileChanged(displayOf(modelPath(s)), first.modelFile!.sha256, sha256(bytes)));
  });

  it('verify still says reproduced for an untouched run, now checking model.dendro too', async () => {
    const { s } = await warmScenario();
    const r = await expectOutcome(s.dir, ['verify', join(s.dir, 'out/small'), '--workers', '1'], { code: 0 });
    expect(r.out).toContain('reproduced: ');
    expect(r.out).toContain('model.dendro');
  });

  it('predict refuses a run whose manifest records no model hash, rather than trusting the file', async () => {
    const { s } = await warmScenario();
    const path = join(s.dir, 'out/small/run-record.json');
    const m = JSON.parse(readFileSync(path, 'utf8')) as Record<string, unknown>;
    delete m.modelFile;
    writeFileSync(path, JSON.stringify(m));
    await expectOutcome(s.dir, predictArgs(s), { code: 1, err: messages.modelFileUnrecorded(displayOf(modelPath(s))) });
  });
});
