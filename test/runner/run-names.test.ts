/**
 * The names of what a run leaves behind: the run folder's files, the model file's first line, the
 * cache's one folder per step kind, and the names older versions used (manifest.json, model.bin,
 * .dendrolog/cache), which are read or pointed out with a one-line note.
 */
import { existsSync, mkdirSync, readdirSync, readFileSync, rmSync, writeFileSync } from 'node:fs';
import { join } from 'node:path';
import { describe, expect, it } from 'vitest';
import { messages } from '../../core/messages.js';
import { sha256 } from '../../core/hash.js';
import { MODEL_FILE_LINE, readModelFile, writeModelFile } from '../../runner/model-file.js';
import { readManifest, RUN_MARKER, runMarker } from '../../runner/run-folder.js';
import { runRecipe } from '../../runner/run.js';
import type { Manifest } from '../../runner/manifest.js';
import { silentProgress } from '../../runner/progress.js';
import { displayOf } from '../../runner/paths.js';
import { cli, scenario } from '../hostile/harness.js';
import { smallData } from '../helpers.js';

/**
 * Rewrites a run folder as an older dendrolog left it: the model file in an older layout under
 * `modelName`, the run record under `recordName`, both recorded in the record and the run marker.
 */
function makeOlder(out: string, layout: 1 | 2, recordName: string, modelName: 'model.dendro' | 'model.bin'): void {
  const model = Buffer.from(writeModelFile({ ...readModelFile(readFileSync(join(out, 'model.dendro'))), layout }));
  const record = JSON.parse(readFileSync(join(out, 'run-record.json'), 'utf8')) as Manifest;
  record.modelFile = { file: modelName, sha256: sha256(model), bytes: model.length };
  const files: Record<string, string | Uint8Array> = {};
  for (const name of ['report.html', 'summary.md', 'predictions.csv']) files[name] = readFileSync(join(out, name));
  files[recordName] = JSON.stringify(record, null, 2) + '\n';
  files[modelName] = model;
  for (const name of ['run-record.json', 'model.dendro']) rmSync(join(out, name));
  for (const [name, data] of Object.entries(files)) writeFileSync(join(out, name), data);
  writeFileSync(join(out, RUN_MARKER), runMarker(files));
}

/** The headline-only layout 2 ("dendrolog model 2"), recorded as such. */
const makeHeadlineOnly = (out: string) => makeOlder(out, 2, 'run-record.json', 'model.dendro');
/** manifest.json, and model.bin (layout 2 without its first line). */
const makeOld = (out: string) => makeOlder(out, 1, 'manifest.json', 'model.bin');

describe('a run folder', () => {
  it("holds the report, the summary, the run record, the model file and the predictions under dendrolog's names", async () => {
    const s = scenario();
    const out = join(s.dir, 'out');
    const r = await cli(['run', s.recipe, '--cache', s.cache, '--out', out, '--workers', '1']);
    expect(r.code).toBe(0);
    expect(readdirSync(out).sort()).toEqual([RUN_MARKER, 'model.dendro', 'predictions.csv', 'report.html', 'run-record.json', 'summary.md']);
    const model = readFileSync(join(out, 'model.dendro'));
    // the first line says what the file is; the gzip stream follows it
    expect(model.subarray(0, MODEL_FILE_LINE.length).toString('latin1')).toBe('dendrolog model 3\n');
    expect([model[MODEL_FILE_LINE.length], model[MODEL_FILE_LINE.length + 1]]).toEqual([0x1f, 0x8b]);
    // every model of the recipe, the chosen one named as the headline
    const bundle = readModelFile(model);
    expect(bundle.target).toBe('y');
    expect(bundle.models.map((m) => m.model)).toEqual(readManifest(out).models.map((m) => m.name));
    expect(bundle.headline).toBe(readManifest(out).headline.model);
    expect(readManifest(out).modelFile?.file).toBe('model.dendro');
    // the cache: one folder per step kind, each entry named by its step key
    const kinds = readdirSync(s.cache).sort();
    expect(kinds).toEqual(expect.arrayContaining(['choose', 'cv_fold', 'fit', 'folds', 'holdout', 'model_table', 'score', 'source']));
    const record = readManifest(out);
    for (const step of record.steps) expect(existsSync(join(s.cache, step.kind, step.key)), step.id).toBe(true);
  });

  it('refuses bytes that are not a model file by what they start with', () => {
    expect(() => readModelFile(Buffer.from('PK\u0003\u0004 a zip file'))).toThrow('not a dendrolog model file (it does not start with "dendrolog model")');
  });

  it('of an older dendrolog (manifest.json, model.bin) is read by verify and predict with a one-line note', async () => {
    const s = scenario({ 'new.csv': smallData().split('\n').slice(0, 6).join('\n') + '\n' });
    const out = join(s.dir, 'out');
    expect((await cli(['run', s.recipe, '--cache', s.cache, '--out', out, '--workers', '1'])).code).toBe(0);
    makeOld(out);
    const note = messages.oldRunRecordName(displayOf(join(out, 'manifest.json')), 'run-record.json');
    const verified = await cli(['verify', out, '--workers', '1']);
    expect(verified.out + verified.err).toContain('reproduced:');
    expect(verified.out + verified.err).toContain('the holdout predictions and model.bin match the run record');
    expect(verified.err.split('\n').filter((l) => l.startsWith('note: ') && l.includes('manifest.json'))).toEqual([note]);
    const predicted = await cli(['predict', out, join(s.dir, 'new.csv'), '--out', join(s.dir, 'pred.csv')]);
    expect(predicted.code).toBe(0);
    expect(predicted.err).toContain(note);
    expect(readFileSync(join(s.dir, 'pred.csv'), 'utf8').split('\n').length).toBeGreaterThan(2);
  });

  it('with a headline-only model.dendro ("dendrolog model 2") still verifies, predicts with its headline and says --model needs a new run', async () => {
    const s = scenario({ 'new.csv': smallData().split('\n').slice(0, 6).join('\n') + '\n' });
    const out = join(s.dir, 'out');
    expect((await cli(['run', s.recipe, '--cache', s.cache, '--out', out, '--workers', '1'])).code).toBe(0);
    makeHeadlineOnly(out);
    const verified = await cli(['verify', out, '--workers', '1']);
    expect(verified.out + verified.err).toContain('the holdout predictions and model.dendro match the run record');
    const headline = readManifest(out).headline.model;
    const predicted = await cli(['predict', out, join(s.dir, 'new.csv'), '--out', join(s.dir, 'pred.csv')]);
    expect(predicted.out).toContain(`\nmodel: ${headline}, the one the run chose\n`);
    const other = readManifest(out).models.find((m) => m.name !== headline)!.name;
    const refused = await cli(['predict', out, join(s.dir, 'new.csv'), '--out', join(s.dir, 'other.csv'), '--model', other]);
    expect(refused.code).toBe(2);
    expect(refused.err).toContain(messages.modelFileHeadlineOnly(other, displayOf(join(out, 'model.dendro')), headline));
    expect(existsSync(join(s.dir, 'other.csv'))).toBe(false);
  });

  it('of the oldest kind (manifest.json without a model record, beside model.bin) still verifies, with a note that the model cannot be checked', async () => {
    const s = scenario();
    const out = join(s.dir, 'out');
    expect((await cli(['run', s.recipe, '--cache', s.cache, '--out', out, '--workers', '1'])).code).toBe(0);
    makeOld(out);
    const record = JSON.parse(readFileSync(join(out, 'manifest.json'), 'utf8')) as Manifest;
    delete record.modelFile;
    writeFileSync(join(out, 'manifest.json'), JSON.stringify(record, null, 2) + '\n');
    const files: Record<string, string | Uint8Array> = {};
    for (const name of ['report.html', 'summary.md', 'predictions.csv', 'manifest.json', 'model.bin']) files[name] = readFileSync(join(out, name));
    writeFileSync(join(out, RUN_MARKER), runMarker(files));
    const verified = await cli(['verify', out, '--workers', '1']);
    expect(verified.code).toBe(0);
    expect(verified.out).toContain(`note: ${messages.modelFileUnrecorded(displayOf(join(out, 'model.bin')))}`);
  });

  it('written over an older one keeps nothing of the old names', async () => {
    const s = scenario();
    const out = join(s.dir, 'out');
    expect((await cli(['run', s.recipe, '--cache', s.cache, '--out', out, '--workers', '1'])).code).toBe(0);
    makeOld(out);
    expect((await cli(['run', s.recipe, '--cache', s.cache, '--out', out, '--workers', '1'])).code).toBe(0);
    expect(readdirSync(out).sort()).toEqual([RUN_MARKER, 'model.dendro', 'predictions.csv', 'report.html', 'run-record.json', 'summary.md']);
  });
});

describe('the default cache', () => {
  it('is dendrolog-cache/ in the working folder; an older version\'s .dendrolog/cache is pointed out, not read or removed', async () => {
    const s = scenario();
    const old = join(s.dir, '.dendrolog', 'cache', 'ab');
    mkdirSync(old, { recursive: true });
    writeFileSync(join(old, 'entry'), 'kept');
    const here = process.cwd();
    const lines: string[] = [];
    try {
      process.chdir(s.dir);
      await runRecipe(s.recipe, { out: join(s.dir, 'out'), workers: 1, progress: silentProgress(lines) });
    } finally {
      process.chdir(here);
    }
    expect(lines.filter((l) => l.startsWith('note: '))).toEqual([messages.oldCacheFolder(join('.dendrolog', 'cache'), 'dendrolog-cache')]);
    expect(readFileSync(join(old, 'entry'), 'utf8')).toBe('kept');
    expect(readdirSync(join(s.dir, 'dendrolog-cache'))).toContain('fit');
  });
});
