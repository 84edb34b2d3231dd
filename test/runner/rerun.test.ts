import { readFileSync, writeFileSync } from 'node:fs';
import { join } from 'node:path';
import { describe, expect, it } from 'vitest';
import { compareManifests, comparisonMarkdown, holdoutChange } from '../../runner/compare.js';
import { DendrologError, messages } from '../../core/messages.js';
import { predictRun } from '../../runner/predict.js';
import { silentProgress } from '../../runner/progress.js';
import { displayOf } from '../../runner/recipe.js';
import { readManifest } from '../../runner/run-folder.js';
import type { Manifest } from '../../runner/manifest.js';
import { runRecipe } from '../../runner/run.js';
import { isolateSettings } from '../../runner/execute.js';
import { verifyRun } from '../../runner/verify.js';
import { sha256 } from '../../core/hash.js';
import { makeFolder, SMALL_RECIPE, smallData } from '../helpers.js';

const FOREST = SMALL_RECIPE.replace('mean: {kind: mean}', 'mean: {kind: mean}\n  forest: {kind: random_forest, grid: {trees: 20, min_leaf: [2, 4], mtry: 1}}').replace(
  'predictors: [x1, x2]',
  'predictors: [x1, x2, kind]',
)
  .replace('columns: {site: string, x1: number, x2: number, y: number}', 'columns: {site: string, x1: number, x2: number, kind: category, y: number}')
  .concat('features:\n  - one_hot: {column: kind}\n');

/** The small data with a category column: kind "a" or "b" by row. */
function data(): string {
  return smallData()
    .split('\n')
    .map((l, i) => (i === 0 ? l.replace('x2,y', 'x2,kind,y') : l ? l.replace(/,([^,]*)$/, `,${i % 3 ? 'a' : 'b'},$1`) : l))
    .join('\n');
}

async function run(recipe = FOREST, extra: Record<string, string> = {}, workers = 1) {
  const dir = makeFolder({ 'recipe.yaml': recipe, 'data/obs.csv': data(), ...extra });
  const r = await runRecipe(join(dir, 'recipe.yaml'), { cache: join(dir, '.cache'), workers, progress: silentProgress() });
  return { dir, ...r };
}

/**
 * Two made-up run records for compare, three models on the same holdout: a's R² moves from 0.5 to
 * 0.9, beyond the old interval 0.4 to 0.6; b's to 0.55, within it; c's stays. Only R² changes.
 */
const FAKE_PAIR = (() => {
  const scores = (r2: number) => ({ r2: { value: r2 }, rmse: { value: 1 }, mae: { value: 1 }, bias: { value: 0 } });
  const interval = { r2: { low: 0.4, high: 0.6 }, rmse: { low: 0.8, high: 1.2 }, mae: { low: 0.8, high: 1.2 }, bias: { low: -0.1, high: 0.1 } };
  const model = (name: string, r2: number) => ({ name, chosen: {}, metrics: { holdout: scores(r2), holdoutInterval90: interval }, importance: null });
  const split = { by: 'group', unit: 'group' as const, holdoutUnits: 2, trainingUnits: 6, digest: '1'.repeat(64), holdout: ['g1', 'g2'] };
  const record = (a: number, b: number) =>
    ({ recipe: { normalized: { name: 'x' } }, sources: [], models: [model('a', a), model('b', b), model('c', 0.5)], warnings: [], headline: { model: 'a' }, split }) as unknown as Manifest;
  return { old: record(0.5, 0.5), new: record(0.9, 0.55) };
})();

const noTiming = (m: object) => ({ ...m, timing: null });

/** A CSV field as predictions.csv writes it: quoted when it holds a comma, a quote or a line break. */
const csvQuoted = (v: string) => (/[",\n\r]/.test(v) ? `"${v.replace(/"/g, '""')}"` : v);

describe('determinism', () => {
  it('gives a byte-identical manifest (outside timing) for 1 and 2 workers and in two separate folders', async () => {
    const one = await run(FOREST, {}, 1);
    const two = await run(FOREST, {}, 2);
    // with two workers the grid cells, final fits and explanations ran on the thread pool
    expect(one.stepsOnThreads).toBe(0);
    expect(two.stepsOnThreads).toBeGreaterThanOrEqual(6);
    expect(noTiming(readManifest(two.outDir))).toEqual(noTiming(readManifest(one.outDir)));
    const strip = (s: string) => s.replace(/"timing": \{[\s\S]*\}\n\}\n$/, '');
    expect(strip(readFileSync(join(two.outDir, 'run-record.json'), 'utf8'))).toBe(strip(readFileSync(join(one.outDir, 'run-record.json'), 'utf8')));
  });
});

describe('a heavy step alone on a thread of its own', () => {
  it('gives the same run record as in the main thread, and only the heavy step moves', async () => {
    // one model and no prediction intervals: its final fit has no other step beside it
    const alone = SMALL_RECIPE.replace('  linear: {kind: linear}\n', '')
      .replace('mean: {kind: mean}', 'forest: {kind: random_forest, grid: {trees: 20, mtry: 1}}')
      .replace('  folds: {k: 3}\n', '  folds: {k: 3}\n  prediction_interval: false\n');
    const here = await run(alone, {}, 2);
    isolateSettings.work = 1;
    try {
      const isolated = await run(alone, {}, 2);
      // the final fit divides into blocks, so it alone has work to measure
      expect(isolated.stepsOnThreads).toBe(here.stepsOnThreads + 1);
      expect(noTiming(readManifest(isolated.outDir))).toEqual(noTiming(readManifest(here.outDir)));
    } finally {
      isolateSettings.work = 50_000_000;
    }
  });
});

describe('a warm rerun', () => {
  it('takes the headline from the cache and shows the cold run’s warnings, the evaluation’s among them, in the same order', async () => {
    const { dir, manifest: cold, results } = await run();
    const warm = await runRecipe(join(dir, 'recipe.yaml'), { cache: join(dir, '.cache'), workers: 1, progress: silentProgress() });
    expect(warm.manifest.timing.steps.find((s) => s.id === 'headline')!.status).toBe('cached');
    expect(warm.manifest.timing.steps.every((s) => s.status === 'cached')).toBe(true);
    // the forest's min_leaf grid has two values, so either choice is at an edge; 3 holdout sites are too few
    expect(cold.warnings.map((w) => w.code)).toEqual(expect.arrayContaining(['grid-edge', 'holdout-unreliable']));
    expect(warm.manifest.warnings).toEqual(cold.warnings);
    expect(warm.results.warnings).toEqual(results.warnings);
    expect(warm.results.chosenModel).toBe(results.chosenModel);
    expect(warm.results.models.map((m) => m.skill)).toEqual(results.models.map((m) => m.skill));
  });
});

describe('verify', () => {
  it('says reproduced for an untouched run', async () => {
    const { outDir } = await run();
    const v = await verifyRun(outDir, { workers: 1, progress: silentProgress() });
    expect(v.reproduced).toBe(true);
    expect(v.lines[0]).toMatch(/^reproduced: /);
  });

  it('names the source file when one byte of it changed', async () => {
    const { dir, outDir } = await run();
    const path = join(dir, 'data/obs.csv');
    const text = readFileSync(path, 'utf8');
    writeFileSync(path, text.replace(/\n(S0,[^,]*,[^,]*,[^,]*,)(\d)/, (_m, a, d) => `\n${a}${(Number(d) + 1) % 10}`));
    const v = await verifyRun(outDir, { workers: 1, progress: silentProgress() });
    expect(v.reproduced).toBe(false);
    expect(v.lines.find((l) => l.startsWith('first difference'))).toMatch(/step "source obs".*source file data\/obs\.csv changed: SHA-256 was [0-9a-f]{64}, now [0-9a-f]{64}/);
  });

  it('names the changed source file even when the recipe pins its hash', async () => {
    const pinned = FOREST.replace('file: data/obs.csv', `file: data/obs.csv\n    sha256: ${sha256(data())}`);
    const { dir, outDir } = await run(pinned);
    writeFileSync(join(dir, 'data/obs.csv'), data().replace('\nS0,', '\nS9,'));
    const v = await verifyRun(outDir, { workers: 1, progress: silentProgress() });
    expect(v.reproduced).toBe(false);
    expect(v.lines.join('\n')).toMatch(/likely cause: source file data\/obs\.csv changed: SHA-256 was/);
  });

  it('says the recipe changed after an edit', async () => {
    const { dir, outDir } = await run();
    writeFileSync(join(dir, 'recipe.yaml'), FOREST.replace('seed: 3', 'seed: 3  # edited'));
    const v = await verifyRun(outDir, { workers: 1, progress: silentProgress() });
    expect(v.reproduced).toBe(false);
    expect(v.lines.join('\n')).toMatch(/likely cause: the recipe changed since the run/);
  });

  it('refuses a folder that is not a run', async () => {
    const dir = makeFolder({ 'x.txt': '' });
    await expect(verifyRun(dir, { workers: 1, progress: silentProgress() })).rejects.toThrow(new DendrologError(messages.notARunFolder(displayOf(dir)), 2));
  });
});

describe('compare', () => {
  it('reports no change for a run against itself', async () => {
    const { outDir } = await run();
    const m = readManifest(outDir);
    const c = compareManifests(m, m);
    expect(c.same).toBe(true);
    expect(comparisonMarkdown(c, 'a', 'b')).toContain('No change:');
  });

  it('says the holdout is the same when a value changed, and judges metrics against the old interval', async () => {
    const a = await run();
    // one target value of a training or holdout row changes; no group moves
    const edited = data().replace(/\n(S0,[^\n]*),([^,\n]+)\n/, (_, head: string, y: string) => `\n${head},${Number(y) + 0.5}\n`);
    expect(edited).not.toBe(data());
    const dir = makeFolder({ 'recipe.yaml': FOREST, 'data/obs.csv': edited });
    const b = await runRecipe(join(dir, 'recipe.yaml'), { cache: join(dir, '.cache'), workers: 1, progress: silentProgress() });
    const c = compareManifests(readManifest(a.outDir), readManifest(b.outDir));
    expect(c.holdout).toEqual({ status: 'same', unit: 'group', old: { unit: 'group', holdout: 3, training: 9 }, new: { unit: 'group', holdout: 3, training: 9 }, nowHeldOut: [], noLongerHeldOut: [] });
    expect(c.metrics.length).toBeGreaterThan(0);
    expect(c.metrics.every((m) => m.comparable)).toBe(true);
    const md = comparisonMarkdown(c, 'a', 'b');
    expect(md).toContain('Same holdout: the same 3 groups held out in both runs');
    // the verdict leads: the holdout, then one line per model judged against the old interval
    expect(md.split('\n')[2]).toMatch(/^\*\*Verdict\.\*\* Both runs held out the same 3 groups, so each change is judged against the old run's 90% bootstrap interval\. Of the models, /);
    const forest = c.verdicts.find((v) => v.model === 'forest')!;
    expect(['within', 'beyond']).toContain(forest.verdict);
    const outside = c.metrics.filter((m) => m.model === 'forest' && m.outsideOldInterval).length;
    expect(forest.verdict).toBe(outside > 0 ? 'beyond' : 'within');
    const line = md.split('\n').find((l) => l.startsWith('- **`forest`**'))!;
    for (const m of c.metrics.filter((x) => x.model === 'forest')) expect(line).toContain(m.outsideOldInterval ? '(**beyond** the old interval ' : '(within the old interval ');
    expect(md.indexOf('**Verdict.**')).toBeLessThan(md.indexOf('### Details'));
  });

  it("judges each model on its own: beyond the old interval, within it, or unchanged", () => {
    const c = compareManifests(FAKE_PAIR.old, FAKE_PAIR.new);
    expect(c.verdicts).toEqual([
      { model: 'a', verdict: 'beyond', headline: { old: true, new: true } },
      { model: 'b', verdict: 'within', headline: { old: false, new: false } },
      { model: 'c', verdict: 'unchanged', headline: { old: false, new: false } },
    ]);
    const md = comparisonMarkdown(c, 'old', 'new');
    expect(md).toContain("Of the models, 1 of 3 moved beyond the old run's interval; 1 changed within it; 1 kept its holdout scores.");
    expect(md).toContain("- **`a`** (headline in both runs): moved beyond the old run's interval. R² 0.500 → 0.900 (**beyond** the old interval 0.400 to 0.600).");
    expect(md).toContain("- **`b`**: changed within the old run's interval. R² 0.500 → 0.550 (within the old interval 0.400 to 0.600).");
    expect(md).toContain('- **`c`**: the same holdout scores.');
  });

  it('says which groups moved when the holdout changed, and does not judge metrics against the old interval', async () => {
    const a = await run();
    const b = await run(FOREST.replace('seed: 3', 'seed: 4'));
    const c = compareManifests(readManifest(a.outDir), readManifest(b.outDir));
    expect(c.holdout.status).toBe('changed');
    const before = readManifest(a.outDir).split!.holdout!;
    const after = readManifest(b.outDir).split!.holdout!;
    expect(c.holdout.nowHeldOut).toEqual(after.filter((g) => !before.includes(g)));
    expect(c.holdout.noLongerHeldOut).toEqual(before.filter((g) => !after.includes(g)));
    expect(c.holdout.nowHeldOut!.length).toBeGreaterThan(0);
    expect(c.metrics.length).toBeGreaterThan(0);
    expect(c.metrics.some((m) => m.comparable || m.outsideOldInterval)).toBe(false);
    const md = comparisonMarkdown(c, 'a', 'b');
    expect(md).toContain('**The holdout changed** (3 groups → 3 groups held out)');
    expect(md).toContain(`- held out now, not before: ${c.holdout.nowHeldOut!.length} group`);
    expect(md).toContain(`\`${c.holdout.nowHeldOut![0]}\``);
    expect(md).toContain('not comparable: other holdout');
    expect(md).toContain('The holdout changed, so the two runs were scored on different rows');
  });

  it('counts moved rows without naming them, and says when a holdout was too large to list', async () => {
    const FAKE = readManifest((await run()).outDir);
    const rec = (holdout: string[] | undefined, digest: string) => ({ by: 'random', unit: 'row' as const, holdoutUnits: 2, trainingUnits: 8, digest, ...(holdout ? { holdout } : {}) });
    const rows = holdoutChange(rec(['aa', 'bb'], '1'.repeat(64)), rec(['aa', 'cc'], '2'.repeat(64)));
    expect([rows.nowHeldOut, rows.noLongerHeldOut]).toEqual([['cc'], ['bb']]);
    const base = compareManifests({ ...FAKE, split: rec(['aa', 'bb'], '1'.repeat(64)) }, { ...FAKE, split: rec(['aa', 'cc'], '2'.repeat(64)) });
    const md = comparisonMarkdown(base, 'a', 'b');
    expect(md).toContain('- held out now, not before: 1 row\n');
    expect(md).not.toContain('`cc`');
    const big = holdoutChange(rec(undefined, '1'.repeat(64)), rec(undefined, '2'.repeat(64)));
    expect([big.status, big.nowHeldOut]).toEqual(['changed', null]);
    expect(comparisonMarkdown({ ...base, holdout: big }, 'a', 'b')).toContain('too many units to list them');
    // from rows to groups: each side counted in its own unit, and said plainly
    const grouped = { ...rec(['L1'], '3'.repeat(64)), unit: 'group' as const, holdoutUnits: 1 };
    const across = compareManifests({ ...FAKE, split: rec(['aa', 'bb'], '1'.repeat(64)) }, { ...FAKE, split: grouped });
    const text = comparisonMarkdown(across, 'a', 'b');
    expect(text).toContain('(2 rows → 1 group held out)');
    expect(text).toContain('The runs split by different units (rows, then groups)');
  });

  it('says the holdout is not known for a run that predates its record', async () => {
    const a = await run();
    const b = await run(FOREST.replace('seed: 3', 'seed: 4'));
    const old = { ...readManifest(a.outDir), split: undefined };
    const c = compareManifests(old, readManifest(b.outDir));
    expect(c.holdout.status).toBe('unknown');
    expect(c.metrics.length).toBeGreaterThan(0);
    expect(c.metrics.every((x) => !x.comparable)).toBe(true);
    const md = comparisonMarkdown(c, 'a', 'b');
    expect(md).toContain('Not known: a run predates the record of its holdout');
    expect(md).toContain('not judged: no holdout record');
    expect(md).not.toContain('not comparable: other holdout');
  });

  it('reports exactly the added grid value as the recipe change', async () => {
    const a = await run();
    const b = await run(FOREST.replace('min_leaf: [2, 4]', 'min_leaf: [2, 4, 6]'));
    const c = compareManifests(readManifest(a.outDir), readManifest(b.outDir));
    expect(c.recipe).toEqual([{ path: 'models.forest.grid.min_leaf', keys: ['models', 'forest', 'grid', 'min_leaf'], old: [2, 4], new: [2, 4, 6] }]);
    expect(c.data).toEqual([]);
    // shown where it sits in the recipe, as a diff of its YAML
    expect(comparisonMarkdown(c, 'a', 'b')).toContain(['```diff', ' models:', '   forest:', '     grid:', '-      min_leaf: [2,4]', '+      min_leaf: [2,4,6]', '```'].join('\n'));
  });

  it('does not call a change "within" when the old run had no interval to judge it by', () => {
    const old = JSON.parse(JSON.stringify(FAKE_PAIR.old)) as Manifest;
    (old.models[1].metrics.holdoutInterval90 as Record<string, { low: number | null; high: number | null }>).r2 = { low: null, high: null };
    const c = compareManifests(old, FAKE_PAIR.new);
    expect(c.verdicts[1]).toMatchObject({ model: 'b', verdict: 'unjudged' });
    expect(comparisonMarkdown(c, 'old', 'new')).toContain('- **`b`**: changed, with no old interval to judge it by. R² 0.500 → 0.550 (no old interval to judge by).');
  });

  it('keeps names from the data inert in Markdown: no code span or link can start in them', () => {
    const rec = (holdout: string[], digest: string) => ({ by: 'groups', unit: 'group' as const, holdoutUnits: holdout.length, trainingUnits: 8, digest, holdout });
    const c = compareManifests({ ...FAKE_PAIR.old, split: rec(['g1'], '1'.repeat(64)) }, { ...FAKE_PAIR.new, split: rec(['x` [link](https://example.invalid) `'], '2'.repeat(64)) });
    const md = comparisonMarkdown(c, 'a', 'b');
    expect(md).toContain('`x&#96; \\[link](https://example.invalid) &#96;`');
    // every bracket escaped: a link needs an unescaped one
    expect(md).not.toMatch(/[^\\]\[link\]\(/);
  });

  it('keeps recipe values inside their diff block, whatever backticks they hold', () => {
    const m = { ...FAKE_PAIR.old, recipe: { ...FAKE_PAIR.old.recipe, normalized: { name: 'x', clean: [{ keep_rows: 'a' }] } } } as unknown as Manifest;
    const n = { ...m, recipe: { ...m.recipe, normalized: { name: 'x', clean: [{ keep_rows: '```\n# injected' }] } } } as unknown as Manifest;
    const md = comparisonMarkdown(compareManifests(m, n), 'a', 'b');
    expect(md).toContain(['````diff', ' clean:', '   (item 1):', '-    keep_rows: "a"', '+    keep_rows: "```\\n# injected"', '````'].join('\n'));
    expect(md).not.toContain('\n# injected');
  });
});

describe('predict', () => {
  it('reproduces the run’s in-sample predictions on the training rows', async () => {
    const { dir, outDir } = await run();
    const out = join(dir, 'pred.csv');
    await predictRun(outDir, join(dir, 'data/obs.csv'), out);
    const lines = readFileSync(out, 'utf8').trim().split('\n');
    const head = lines[0].split(',');
    const col = head.indexOf('predicted_y');
    const predicted = lines.slice(1).map((l) => l.split(',')[col]);
    const stored = readFileSync(join(outDir, 'predictions.csv'), 'utf8').trim().split('\n').slice(1).map((l) => l.split(','));
    const training = stored.filter((s) => s[1] === 'training');
    expect(training.length).toBeGreaterThan(20);
    for (const s of training) expect(predicted[Number(s[0])]).toBe(s[3]);
    expect(lines.length - 1).toBe(data().trim().split('\n').length - 1);
  });

  it('fails naming a column the file lacks', async () => {
    const { dir, outDir } = await run();
    writeFileSync(join(dir, 'new.csv'), 'site,x1,kind\nS1,1,a\n');
    await expect(predictRun(outDir, join(dir, 'new.csv'), join(dir, 'p.csv'))).rejects.toThrow(/declared column "x2" is not in the file's header/);
  });

  it('follows the recipe on an unseen category: that row not predicted, with the reason, by default; the shared column with unseen: other', async () => {
    const { dir, outDir } = await run();
    writeFileSync(join(dir, 'new.csv'), 'site,x1,x2,kind,y\nS1,1,2,zzz,0\nS1,1,2,a,0\n');
    const first = await predictRun(outDir, join(dir, 'new.csv'), join(dir, 'p.csv'));
    // one reason on that row; the other row is predicted as usual
    expect(first).toMatchObject({ rows: 2, predicted: 1, notPredicted: 1 });
    const lines = readFileSync(join(dir, 'p.csv'), 'utf8').trim().split('\n');
    expect(lines[1].endsWith(`,${csvQuoted(messages.unseenCategoryRow('kind', 'zzz'))}`)).toBe(true);
    expect(lines[2]).toMatch(/^S1,1,2,a,0,2,-?\d/);
    const other = await run(FOREST.replace('one_hot: {column: kind}', 'one_hot: {column: kind, unseen: other}'));
    writeFileSync(join(other.dir, 'new.csv'), 'site,x1,x2,kind,y\nS1,1,2,zzz,0\n');
    const s = await predictRun(other.outDir, join(other.dir, 'new.csv'), join(other.dir, 'p.csv'));
    expect(s.predicted).toBe(1);
  });

  it('flags predictors outside the training range and lists rows it cannot predict with the reason', async () => {
    const { dir, outDir } = await run();
    writeFileSync(join(dir, 'new.csv'), 'site,x1,x2,kind\nS1,100,2,a\nS2,,2,a\n');
    const s = await predictRun(outDir, join(dir, 'new.csv'), join(dir, 'p.csv'));
    expect(s).toMatchObject({ rows: 2, predicted: 1, notPredicted: 1, outsideRange: 1 });
    const lines = readFileSync(join(dir, 'p.csv'), 'utf8').trim().split('\n');
    expect(lines[1]).toMatch(/,x1,$/);
    expect(lines[2]).toMatch(/,missing x1$/);
  });
});
