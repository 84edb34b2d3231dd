/**
 * A run record (run-record.json) edited by hand: verify and predict read the recipe it keeps through
 * the same checks as a recipe file, so damage is named instead of failing inside a step.
 */
import { copyFileSync, readFileSync, rmSync, writeFileSync } from 'node:fs';
import { join } from 'node:path';
import { describe, expect, it } from 'vitest';
import { messages } from '../../core/messages.js';
import { sha256 } from '../../core/hash.js';
import { displayOf } from '../../runner/recipe.js';
import { SMALL_RECIPE } from '../helpers.js';
import { expectOutcome, scenario } from './harness.js';

/** A finished run of the small recipe, and a way to edit its record's stored recipe. */
async function finishedRun() {
  const s = scenario();
  await expectOutcome(s.dir, ['run', s.recipe, '--cache', s.cache, '--workers', '1'], { code: 0, changes: ['out/small/'] });
  const run = join(s.dir, 'out/small');
  const path = join(run, 'run-record.json');
  const edit = (f: (normalized: Record<string, unknown>) => void) => {
    const m = JSON.parse(readFileSync(path, 'utf8'));
    f(m.recipe.normalized);
    writeFileSync(path, JSON.stringify(m, null, 2));
  };
  return { ...s, run, path, edit };
}

const DAMAGED = /the recipe this run record keeps is damaged, so the run cannot be rerun or applied \(.*\); run the recipe again to write a new record/;

describe('a run record whose stored recipe was edited', () => {
  it('is refused by verify when a model lost its kind, naming the record and the key', async () => {
    const r = await finishedRun();
    r.edit((n) => delete (n.models as Record<string, Record<string, unknown>>).linear.kind);
    const out = await expectOutcome(r.dir, ['verify', r.run, '--workers', '1'], { code: 2, err: DAMAGED });
    expect(out.err).toMatch(new RegExp(`^${displayOf(r.path).replace(/[.*+?^${}()|[\]\\]/g, '\\$&')}: `));
    // the words name the key; no line number of text the user never saw
    expect(out.err).toContain('models.linear needs the key "kind"');
    expect(out.err).not.toMatch(/:\d+:\d+:/);
  });

  it('is refused by predict when the models are gone', async () => {
    const r = await finishedRun();
    r.edit((n) => delete n.models);
    await expectOutcome(r.dir, ['predict', r.run, join(r.dir, 'data/obs.csv'), '--out', join(r.dir, 'p.csv')], { code: 2, err: DAMAGED});
  });

  it('is refused when a cleaning step became a kind dendrolog does not know', async () => {
    const r = await finishedRun();
    r.edit((n) => (n.clean = [{ kind: 'explode', columns: ['x1'] }]));
    await expectOutcome(r.dir, ['verify', r.run, '--workers', '1'], { code: 2, err: DAMAGED});
  });

  it('is refused when a stored value is one a recipe may not hold', async () => {
    const r = await finishedRun();
    r.edit((n) => ((n.evaluation as { folds: { k: number } }).folds.k = 1));
    await expectOutcome(r.dir, ['verify', r.run, '--workers', '1'], { code: 2, err: /evaluation\.folds\.k is 1, but it must be at least 2/});
  });

  it('is refused when it is not an object at all', async () => {
    const r = await finishedRun();
    const m = JSON.parse(readFileSync(r.path, 'utf8'));
    m.recipe.normalized = { name: 'small' };
    writeFileSync(r.path, JSON.stringify(m));
    await expectOutcome(r.dir, ['verify', r.run, '--workers', '1'], { code: 2, err: DAMAGED });
  });
});

describe('a run folder whose files were changed after the run', () => {
  for (const [file, change] of [
    ['predictions.csv', (t: string) => t.replace(/\n(\d+),holdout,([^,]+),[^\n]+/, '\n$1,holdout,$2,999')],
    ['report.html', (t: string) => t.replace('R²', 'R² 0.999')],
    ['summary.md', (t: string) => t + '\nall good\n'],
  ] as const) {
    it(`is not reproduced when ${file} was edited, naming the file`, async () => {
      const r = await finishedRun();
      const path = join(r.run, file);
      const edited = change(readFileSync(path, 'utf8'));
      expect(edited).not.toBe(readFileSync(path, 'utf8'));
      writeFileSync(path, edited);
      const out = await expectOutcome(r.dir, ['verify', r.run, '--workers', '1'], { code: 1 });
      expect(out.out).toContain(`run folder: ${messages.runFileChanged(file)}`);
    });
  }

  it('is not reproduced when predictions.csv was deleted', async () => {
    const r = await finishedRun();
    rmSync(join(r.run, 'predictions.csv'));
    const out = await expectOutcome(r.dir, ['verify', r.run, '--workers', '1'], { code: 1 });
    expect(out.out).toContain(`run folder: ${messages.runFileMissing('predictions.csv')}`);
  });

  it('refuses in predict a model.dendro of another run even when the record was edited to its size and hash', async () => {
    const r = await finishedRun();
    // a second run of a different analysis, in a folder of its own
    const other = scenario({ 'recipe.yaml': SMALL_RECIPE.replace('seed: 3', 'seed: 4') });
    await expectOutcome(other.dir, ['run', other.recipe, '--cache', other.cache, '--workers', '1'], { code: 0, changes: ['out/small/'] });
    copyFileSync(join(other.dir, 'out/small/model.dendro'), join(r.run, 'model.dendro'));
    const bytes = readFileSync(join(r.run, 'model.dendro'));
    const m = JSON.parse(readFileSync(r.path, 'utf8'));
    m.modelFile = { file: 'model.dendro', sha256: sha256(bytes), bytes: bytes.length };
    writeFileSync(r.path, JSON.stringify(m, null, 2));
    await expectOutcome(r.dir, ['predict', r.run, join(r.dir, 'data/obs.csv'), '--out', join(r.dir, 'p.csv')], {
      code: 1,
      err: messages.modelFileOtherRun(displayOf(join(r.run, 'model.dendro'))),
    });
  });
});
