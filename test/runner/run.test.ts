import { existsSync, readFileSync, readdirSync, writeFileSync } from 'node:fs';
import { join } from 'node:path';
import { describe, expect, it, vi } from 'vitest';
import { modelKinds } from '../../steps/model-kinds.js';
import { DendrologError, messages } from '../../core/messages.js';
import { silentProgress } from '../../runner/progress.js';
import { displayOf } from '../../runner/recipe.js';
import { runRecipe } from '../../runner/run.js';
import { RUN_MARKER } from '../../runner/run-folder.js';
import { makeFolder, SMALL_RECIPE, smallData } from '../helpers.js';

async function run(files: Record<string, string>, opts: { cache?: string; out?: string } = {}) {
  const dir = files['recipe.yaml'] ? makeFolder(files) : makeFolder({ 'recipe.yaml': SMALL_RECIPE, ...files });
  const lines: string[] = [];
  const result = await runRecipe(join(dir, 'recipe.yaml'), {
    cache: opts.cache ?? join(dir, '.cache'),
    out: opts.out,
    workers: 1,
    progress: silentProgress(lines),
  });
  return { dir, lines, result };
}

async function failure(files: Record<string, string>): Promise<DendrologError & { dir: string }> {
  const dir = files['recipe.yaml'] ? makeFolder(files) : makeFolder({ 'recipe.yaml': SMALL_RECIPE, ...files });
  try {
    await runRecipe(join(dir, 'recipe.yaml'), { cache: join(dir, '.cache'), workers: 1, progress: silentProgress() });
  } catch (e) {
    return Object.assign(e as DendrologError, { dir });
  }
  throw new Error('expected the run to fail');
}

const withoutTiming = (m: object) => ({ ...m, timing: undefined });

describe('running a recipe', () => {
  it('scores a linear model almost perfectly on nearly linear data, and writes its five outputs and the run folder marker', async () => {
    const { result } = await run({ 'data/obs.csv': smallData() });
    const linear = result.results.models.find((m) => m.name === 'linear')!;
    expect(linear.holdout.r2.value).toBeGreaterThan(0.99);
    expect(result.results.chosenModel).toBe('linear');
    expect(readdirSync(result.outDir).sort()).toEqual([RUN_MARKER, 'model.dendro', 'predictions.csv', 'report.html', 'run-record.json', 'summary.md']);
  });

  it('takes every step from the cache the second time, with an identical manifest apart from timing', async () => {
    const { dir, result: first } = await run({ 'data/obs.csv': smallData() });
    const lines: string[] = [];
    const second = await runRecipe(join(dir, 'recipe.yaml'), { cache: join(dir, '.cache'), workers: 1, progress: silentProgress(lines) });
    const stepLines = lines.filter((l) => /^(ran|cached) /.test(l));
    expect(stepLines.length).toBe(first.manifest.steps.length);
    expect(stepLines.every((l) => l.startsWith('cached'))).toBe(true);
    expect(second.manifest.timing.steps.every((s) => s.status === 'cached')).toBe(true);
    expect(withoutTiming(second.manifest)).toEqual(withoutTiming(first.manifest));
  });

  it('recomputes a corrupted cache entry, warns about it, and gets the same outputs', async () => {
    const { dir, result: first } = await run({ 'data/obs.csv': smallData() });
    const key = first.manifest.steps.find((s) => s.id === 'holdout')!.key;
    const entry = join(dir, '.cache', 'holdout', key);
    const raw = readFileSync(entry);
    raw[raw.length - 2] ^= 1;
    writeFileSync(entry, raw);
    const second = await runRecipe(join(dir, 'recipe.yaml'), { cache: join(dir, '.cache'), workers: 1, progress: silentProgress() });
    expect(second.manifest.warnings).toContainEqual({ code: 'cache-corrupt', message: messages.cacheCorrupt(key), count: 1 });
    expect(second.manifest.steps).toEqual(first.manifest.steps);
    expect(second.manifest.timing.steps.find((s) => s.id === 'holdout')!.status).toBe('ran');
  });

  it('counts what each cleaning step removed and why', async () => {
    const data = smallData().replace('S0,0,0,0.0000', 'S0,-9999,0,0.0000').replace(/\nS1,([^,]*),/, '\nS1,,');
    const recipe =
      SMALL_RECIPE +
      `clean:
  - replace: {columns: [x1], values: [-9999], with: missing}
  - drop_missing: [x1]
  - within: {column: x2, max: 5}
  - keep_rows: "d.y > -100"
`;
    const { result } = await run({ 'recipe.yaml': recipe, 'data/obs.csv': data });
    const [replace, drop, within, keep] = result.results.cleaning;
    expect(replace.detail).toContain('1 values equal to -9999 set to missing');
    expect([drop.rowsIn - drop.rowsOut, drop.rowsIn]).toEqual([2, 60]);
    // rows left after drop_missing whose x2 exceeds 5, counted straight from the file
    const rows = data.split('\n').slice(1, -1).map((l) => l.split(','));
    const above = rows.filter((f) => f[1] !== '' && f[1] !== '-9999' && Number(f[2]) > 5).length;
    expect(above).toBeGreaterThan(0);
    expect(within.detail).toBe(`${above} rows dropped with x2 outside [-∞, 5] (0 below, ${above} above)`);
    expect(keep.rowsIn - keep.rowsOut).toBe(0);
  });

  it('stops naming file, line and column when a value does not parse as its declared type', async () => {
    const data = smallData().replace(/\nS2,([^,]*),/, '\nS2,abc,');
    const e = await failure({ 'data/obs.csv': data });
    const line = data.split('\n').findIndex((l) => l.startsWith('S2,abc')) + 1;
    expect(e.message).toContain(`obs.csv:${line}: column "x1" holds "abc", which is not a number`);
    expect(e.exitCode).toBe(1);
  });

  it('names a declared column that the file lacks, with a suggestion', async () => {
    const e = await failure({ 'data/obs.csv': smallData().replace('site,x1,x2,y', 'site,x_1,x2,y') });
    expect(e.message).toBe(messages.columnNotInFile(displayOf(join(e.dir, 'data/obs.csv')), 'x1', ['site', 'x_1', 'x2', 'y'], 'x_1'));
  });

  it('stops when the target has no values left after cleaning', async () => {
    const e = await failure({
      'recipe.yaml': SMALL_RECIPE + 'clean:\n  - keep_rows: "d.y > 1e9"\n',
      'data/obs.csv': smallData(),
    });
    expect(e.message).toBe(messages.targetAllMissing('y'));
  });

  it('never replaces a good report with a failed run', async () => {
    const { dir, result } = await run({ 'data/obs.csv': smallData() });
    const before = readFileSync(join(result.outDir, 'report.html'), 'utf8');
    writeFileSync(join(dir, 'data/obs.csv'), smallData().replace(/\nS2,([^,]*),/, '\nS2,abc,'));
    await expect(runRecipe(join(dir, 'recipe.yaml'), { cache: join(dir, '.cache'), workers: 1, progress: silentProgress() })).rejects.toThrow(
      /not a number/,
    );
    expect(readFileSync(join(result.outDir, 'report.html'), 'utf8')).toBe(before);
    expect(readdirSync(join(dir, 'out')).filter((f) => f.startsWith('.'))).toEqual([]);
    expect(existsSync(join(result.outDir, 'run-record.json'))).toBe(true);
  });
});

describe('growing a grid', () => {
  it('fits only the new cell: its folds, then the chosen cell once more on all training rows', async () => {
    const one = SMALL_RECIPE.replace('mean: {kind: mean}', 'tree: {kind: decision_tree, grid: {max_depth: [2]}}');
    const two = one.replace('max_depth: [2]', 'max_depth: [2, 3]');
    const dir = makeFolder({ 'recipe.yaml': one, 'data/obs.csv': smallData() });
    const cache = join(dir, '.cache');
    await runRecipe(join(dir, 'recipe.yaml'), { cache, workers: 1, progress: silentProgress() });
    writeFileSync(join(dir, 'recipe.yaml'), two);
    const fits = vi.spyOn(modelKinds.decision_tree, 'fit');
    const linearFits = vi.spyOn(modelKinds.linear, 'fit');
    const lines: string[] = [];
    await runRecipe(join(dir, 'recipe.yaml'), { cache, workers: 1, progress: silentProgress(lines) });
    // 3 folds of the new cell + 1 final fit of the chosen cell + its 3 fold models for the
    // prediction intervals (they follow the choice); the linear model is untouched
    expect(fits).toHaveBeenCalledTimes(3 + 1 + 3);
    expect(linearFits).not.toHaveBeenCalled();
    // the new cell's 3 folds and their gathering; nothing of the cell already there
    const ran = lines.filter((l) => l.startsWith('ran') && l.includes(' cv '));
    expect(ran).toHaveLength(4);
    for (const l of ran) expect(l).toContain('cv tree max_depth=3');
    vi.restoreAllMocks();
  });
});
