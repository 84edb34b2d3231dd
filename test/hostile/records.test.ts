/**
 * A run record (manifest.json) edited by hand: verify and predict read the recipe it keeps through
 * the same checks as a recipe file, so damage is named instead of failing inside a step.
 */
import { readFileSync, writeFileSync } from 'node:fs';
import { join } from 'node:path';
import { describe, expect, it } from 'vitest';
import { displayOf } from '../../runner/recipe.js';
import { expectOutcome, scenario } from './harness.js';

/** A finished run of the small recipe, and a way to edit its record's stored recipe. */
async function finishedRun() {
  const s = scenario();
  await expectOutcome(s.dir, ['run', s.recipe, '--cache', s.cache, '--workers', '1'], { code: 0, changes: ['out/small/'] });
  const run = join(s.dir, 'out/small');
  const path = join(run, 'manifest.json');
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
    const out = await expectOutcome(r.dir, ['verify', r.run, '--workers', '1'], { code: 2, err: DAMAGED, changes: ['out/small/'] });
    expect(out.err).toContain(`${displayOf(r.path)} (recipe.normalized):`);
    expect(out.err).toContain('"kind"');
  });

  it('is refused by predict when the models are gone', async () => {
    const r = await finishedRun();
    r.edit((n) => delete n.models);
    await expectOutcome(r.dir, ['predict', r.run, join(r.dir, 'data/obs.csv'), '--out', join(r.dir, 'p.csv')], { code: 2, err: DAMAGED, changes: ['out/small/'] });
  });

  it('is refused when a cleaning step became a kind dendrolog does not know', async () => {
    const r = await finishedRun();
    r.edit((n) => (n.clean = [{ kind: 'explode', columns: ['x1'] }]));
    await expectOutcome(r.dir, ['verify', r.run, '--workers', '1'], { code: 2, err: DAMAGED, changes: ['out/small/'] });
  });

  it('is refused when a stored value is one a recipe may not hold', async () => {
    const r = await finishedRun();
    r.edit((n) => ((n.evaluation as { folds: { k: number } }).folds.k = 1));
    await expectOutcome(r.dir, ['verify', r.run, '--workers', '1'], { code: 2, err: /evaluation\.folds\.k is 1, but it must be at least 2/, changes: ['out/small/'] });
  });

  it('is refused when it is not an object at all', async () => {
    const r = await finishedRun();
    const m = JSON.parse(readFileSync(r.path, 'utf8'));
    m.recipe.normalized = { name: 'small' };
    writeFileSync(r.path, JSON.stringify(m));
    await expectOutcome(r.dir, ['verify', r.run, '--workers', '1'], { code: 2, err: DAMAGED, changes: ['out/small/'] });
  });
});
