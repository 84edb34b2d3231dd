/**
 * Numbers that cannot be trusted are never shown as numbers: overflowing literals are refused where
 * they are written, metrics stay right for huge or offset targets, an R² without a meaningful
 * denominator is undefined with its reason, a model scored on non-finite predictions is never
 * chosen, and thin holdouts are labelled. Also the linear model's own messages (collinear and
 * constant predictors) and engine errors as messages.
 */
import { readFileSync } from 'node:fs';
import { join } from 'node:path';
import { describe, expect, it } from 'vitest';
import { metricReasons } from '../../models/metrics.js';
import { engineMessages } from '../../models/engine-errors.js';
import type { Manifest } from '../../runner/manifest.js';
import { messages } from '../../core/messages.js';
import { SMALL_RECIPE, smallData } from '../helpers.js';
import { expectOutcome, lineColOf, scenario } from './harness.js';

const runArgs = (s: { recipe: string; cache: string }) => ['run', s.recipe, '--cache', s.cache, '--workers', '1'];
const manifestOf = (dir: string): Manifest => JSON.parse(readFileSync(join(dir, 'out/small/run-record.json'), 'utf8'));
const summaryOf = (dir: string): string => readFileSync(join(dir, 'out/small/summary.md'), 'utf8');
const reportOf = (dir: string): string => readFileSync(join(dir, 'out/small/report.html'), 'utf8');

/** smallData() with the target (last field) of every row passed through f; other fields unchanged. */
function withTarget(f: (y: number, site: string) => string): string {
  const [header, ...rows] = smallData().trim().split('\n');
  return [header, ...rows.map((r) => {
    const c = r.split(',');
    return [...c.slice(0, 3), f(Number(c[3]), c[0])].join(',');
  })].join('\n') + '\n';
}

/** smallData() with x1 and x2 replaced. */
function withPredictors(f: (x1: number, x2: number) => [string, string]): string {
  const [header, ...rows] = smallData().trim().split('\n');
  return [header, ...rows.map((r) => {
    const c = r.split(',');
    return [c[0], ...f(Number(c[1]), Number(c[2])), c[3]].join(',');
  })].join('\n') + '\n';
}

async function runOk(files: Record<string, string>): Promise<{ dir: string; manifest: Manifest; err: string; out: string }> {
  const s = scenario(files);
  const r = await expectOutcome(s.dir, runArgs(s), { code: 0, changes: ['out/small/'] });
  return { dir: s.dir, manifest: manifestOf(s.dir), err: r.err, out: r.out };
}

const model = (m: Manifest, name: string) => m.models.find((x) => x.name === name)!;
type Metrics = { value: number | null; reason?: string };
const metric = (m: Manifest, name: string, part: 'holdout' | 'crossValidated', k: string): Metrics =>
  (model(m, name).metrics[part] as Record<string, Metrics>)[k];

describe('overflowing literals are refused where they are written', () => {
  it('a CSV value 1e309 stops the run naming the file, line and column', async () => {
    const data = withTarget((y, site) => (site === 'S3' ? '1e309' : String(y)));
    const s = scenario({ 'data/obs.csv': data });
    const line = data.split('\n').findIndex((l) => l.endsWith(',1e309')) + 1;
    await expectOutcome(s.dir, runArgs(s), { code: 1, err: messages.valueNotFinite(`${join(s.dir, 'data/obs.csv')}:${line}`, 'y', '1e309') });
  });

  it('a JSON number 1e309 (which JSON.parse reads as Infinity) names the record, not "null"', async () => {
    const recipe = SMALL_RECIPE.replace('file: data/obs.csv', 'file: data/obs.json');
    const records = smallData().trim().split('\n').slice(1).map((r, i) => {
      const [site, x1, x2, y] = r.split(',');
      return `{"site": "${site}", "x1": ${x1}, "x2": ${x2}, "y": ${i === 4 ? '-1e309' : y}}`;
    });
    const s = scenario({ 'recipe.yaml': recipe, 'data/obs.json': `[${records.join(',\n')}]` });
    await expectOutcome(s.dir, runArgs(s), { code: 1, err: messages.valueNotFinite(`${join(s.dir, 'data/obs.json')}: record 5`, 'y', '-Infinity') });
  });

  it('1e309 in within bounds is refused at its line and column with exit 2', async () => {
    const recipe = SMALL_RECIPE.replace('target: y\n', 'target: y\nclean:\n  - within: {column: y, min: -5, max: 1e309}\n');
    const s = scenario({ 'recipe.yaml': recipe });
    await expectOutcome(s.dir, ['check', s.recipe], {
      code: 2,
      err: `${s.recipe}:${lineColOf(recipe, '1e309')}: ${messages.recipeNumberNotFinite('clean[0].within.max', Infinity)}`,
    });
  });

  it('.inf in a grid is refused at its line and column, and not called "null"', async () => {
    const recipe = SMALL_RECIPE.replace('  mean: {kind: mean}\n', '  mean: {kind: mean}\n  tree: {kind: decision_tree, grid: {max_depth: [2, .inf]}}\n');
    const s = scenario({ 'recipe.yaml': recipe });
    const r = await expectOutcome(s.dir, ['check', s.recipe], {
      code: 2,
      err: `${s.recipe}:${lineColOf(recipe, '.inf')}: ${messages.recipeNumberNotFinite('models.tree.grid.max_depth[1]', Infinity)}`,
    });
    expect(r.err).not.toContain('null');
  });

  it('-1e309 in replace values and .nan in a missing list are each refused at their positions', async () => {
    const recipe = SMALL_RECIPE.replace('    file: data/obs.csv\n', '    file: data/obs.csv\n    missing: [NA, .nan]\n').replace(
      'target: y\n',
      'target: y\nclean:\n  - replace: {columns: [x1], values: [-1e309], with: missing}\n',
    );
    const s = scenario({ 'recipe.yaml': recipe });
    const r = await expectOutcome(s.dir, ['check', s.recipe], { code: 2 });
    expect(r.err).toContain(`${s.recipe}:${lineColOf(recipe, '.nan')}: ${messages.recipeNumberNotFinite('sources.obs.missing[1]', NaN)}`);
    expect(r.err).toContain(`${s.recipe}:${lineColOf(recipe, '-1e309')}: ${messages.recipeNumberNotFinite('clean[0].replace.values[0]', -Infinity)}`);
  });
});

describe('metrics stay right whatever the size of the target', () => {
  it('a target of constant 5.1 gives an undefined R² with its reason, never "1.000 (1.000 to 1.000)"', async () => {
    const { dir, manifest } = await runOk({ 'data/obs.csv': withTarget(() => '5.1') });
    const r2 = metric(manifest, 'linear', 'holdout', 'r2');
    expect(r2.value).toBeNull();
    expect([metricReasons.constant(), expect.stringMatching(/^the observed values are constant for all practical purposes/)]).toContainEqual(r2.reason);
    expect(manifest.headline.value).toBeNull();
    expect((model(manifest, 'linear').metrics.holdoutInterval90 as Record<string, { low: number | null }>).r2.low).toBeNull();
    expect(model(manifest, 'linear').skill.mean).toBeNull();
    const summary = summaryOf(dir);
    expect(summary).not.toMatch(/1\.000 \(/);
    expect(summary).toContain(`**Holdout R²:** undefined (${r2.reason})`);
    expect(reportOf(dir)).not.toContain('1.000 to 1.000');
  });

  // splits by time (the row number), so every variant of the data holds out and folds the same rows:
  // seeded splits depend on the data's hash and would differ
  const byTime = SMALL_RECIPE.replace('x2: number, y: number}', 'x2: number, t: number, y: number}')
    .replace('groups: site\n', 'time: t\n')
    .replace('  folds: {k: 3}\n', '  folds: {k: 3, by: time}\n  holdout: {by: time, fraction: 0.25}\n');
  const timeData = (f: (y: number) => string) => {
    const [, ...rows] = smallData().trim().split('\n');
    return ['site,x1,x2,t,y', ...rows.map((r, i) => {
      const c = r.split(',');
      return [...c.slice(0, 3), String(i), f(Number(c[3]))].join(',');
    })].join('\n') + '\n';
  };

  it('a target scaled by 1e300 gives the same R² as the unscaled data, and RMSE scaled by 1e300', async () => {
    const plain = await runOk({ 'recipe.yaml': byTime, 'data/obs.csv': timeData((y) => String(y)) });
    const big = await runOk({ 'recipe.yaml': byTime, 'data/obs.csv': timeData((y) => String(y * 1e300)) });
    for (const name of ['linear', 'mean']) {
      for (const part of ['holdout', 'crossValidated'] as const) {
        const a = metric(plain.manifest, name, part, 'r2').value!;
        const b = metric(big.manifest, name, part, 'r2').value!;
        expect(Math.abs(a - b)).toBeLessThan(1e-9);
      }
      expect(metric(big.manifest, name, 'holdout', 'rmse').value! / 1e300).toBeCloseTo(metric(plain.manifest, name, 'holdout', 'rmse').value!, 9);
    }
    expect(big.manifest.headline.model).toBe(plain.manifest.headline.model);
    expect(model(big.manifest, 'linear').skill.mean).toBeCloseTo(model(plain.manifest, 'linear').skill.mean!, 9);
  });

  it('a target of 1e9 plus the same small values gives the same R² as the values alone', async () => {
    const plain = await runOk({ 'recipe.yaml': byTime, 'data/obs.csv': timeData((y) => y.toFixed(4)) });
    const shifted = await runOk({ 'recipe.yaml': byTime, 'data/obs.csv': timeData((y) => (1e9 + y).toFixed(4)) });
    for (const name of ['linear', 'mean']) {
      for (const part of ['holdout', 'crossValidated'] as const) {
        const a = metric(plain.manifest, name, part, 'r2').value!;
        const b = metric(shifted.manifest, name, part, 'r2').value!;
        // 1e9 + y keeps y's 4 decimals exactly enough (float64 spacing there is 1.2e-7)
        expect(Math.abs(a - b)).toBeLessThan(1e-6);
      }
    }
  });
});

describe('a model scored on non-finite numbers is failed, never chosen', () => {
  // x3 is about 1e-300 except at site S0, where it is 1e200: a linear fit on folds without S0 takes
  // a slope near 1e300 and predicts S0's rows as Infinity; the plain running scores used to skip
  // those rows (their JSON form is null) and chose the linear model
  const recipe = SMALL_RECIPE.replace('x2: number, y: number}', 'x2: number, x3: number, y: number}')
    .replace('predictors: [x1, x2]', 'predictors: [x1, x2, x3]')
    .replace('  mean: {kind: mean}\n', '  mean: {kind: mean}\n  tree: {kind: decision_tree, grid: {max_depth: [3]}}\n');
  const data = (() => {
    const [, ...rows] = smallData().trim().split('\n');
    return ['site,x1,x2,x3,y', ...rows.map((r, i) => {
      const c = r.split(',');
      return [...c.slice(0, 3), c[0] === 'S0' ? '1e200' : String(1e-300 * (((i * 7) % 11) + 1)), c[3]].join(',');
    })].join('\n') + '\n';
  })();

  it('reports the model as failed with the reason, in the manifest and the report, and heads with another', async () => {
    const { dir, manifest } = await runOk({ 'recipe.yaml': recipe, 'data/obs.csv': data });
    expect(manifest.headline.model).not.toBe('linear');
    const failed = model(manifest, 'linear').failed;
    const possible = [1, 2, 3].map((f) => messages.modelScoreNotFinite('RMSE', messages.predictionNotFinite(Infinity, `cross-validation fold ${f}`)));
    expect(possible).toContain(failed);
    expect(model(manifest, 'tree').failed).toBeUndefined();
    // every cross-validated metric of the failed model is undefined, not computed on the finite rows
    for (const k of ['r2', 'rmse', 'mae', 'bias']) expect(metric(manifest, 'linear', 'crossValidated', k).value).toBeNull();
    expect(summaryOf(dir)).toContain('| linear (failed) |');
    expect(reportOf(dir)).toContain('<span class="tag failed">failed</span>');
  });

  it('stops with exit 1 when no model has a finite cross-validated score', async () => {
    // values near 1e308 overflow every model's sums
    const s = scenario({ 'data/obs.csv': withTarget((y) => String(1e307 * (10 + y / 2))) });
    const r = await expectOutcome(s.dir, runArgs(s), { code: 1 });
    const reasons = ['linear', 'mean'].map((m) => ({ model: m, reason: messages.predictionNotFinite(NaN, 'cross-validation fold 1') }));
    expect(r.err).toContain(messages.noModelScored('RMSE', reasons));
  });

  it('stops with exit 1 when choosing by R² and the target is constant, saying why', async () => {
    const recipe = SMALL_RECIPE.replace('  folds: {k: 3}\n', '  folds: {k: 3}\n  choose_by: r2\n');
    const s = scenario({ 'recipe.yaml': recipe, 'data/obs.csv': withTarget(() => '7') });
    const r = await expectOutcome(s.dir, runArgs(s), { code: 1 });
    expect(r.err).toContain(messages.noModelScored('R²', ['linear', 'mean'].map((m) => ({ model: m, reason: metricReasons.constant() }))));
  });
});

describe('intervals from a thin holdout are labelled unreliable', () => {
  it('fewer than 5 holdout groups: a warning, and the label in the summary and report', async () => {
    const { dir, manifest } = await runOk({});
    const message = messages.holdoutUnreliable('3 holdout groups (fewer than 5)');
    expect(manifest.warnings).toContainEqual({ code: 'holdout-unreliable', message, count: 1 });
    expect(summaryOf(dir)).toContain(message);
    expect(summaryOf(dir)).toContain('**Intervals unreliable:** they rest on 3 holdout groups (fewer than 5).');
    expect(summaryOf(dir)).toMatch(/90% interval [^)]*, unreliable\)/);
    expect(reportOf(dir)).toContain('<span class="tag unreliable">unreliable</span>');
  });

  it('fewer than 20 holdout rows of a random holdout: the same warning, counted in rows', async () => {
    const recipe = SMALL_RECIPE.replace('groups: site\n', '').replace('  folds: {k: 3}\n', '  folds: {k: 3}\n  holdout: {by: random, fraction: 0.2}\n');
    const { manifest } = await runOk({ 'recipe.yaml': recipe });
    expect(manifest.warnings).toContainEqual({ code: 'holdout-unreliable', message: messages.holdoutUnreliable('12 holdout rows (fewer than 20)'), count: 1 });
  });
});

describe('predictors a model cannot use get their own messages', () => {
  it('a predictor that is twice another is left out of the linear fit with a warning naming both', async () => {
    const { manifest } = await runOk({ 'data/obs.csv': withPredictors((x1) => [String(x1), String(2 * x1)]) });
    const message = messages.linearCollinear('linear', ['x2 (a linear combination of x1)']);
    expect(manifest.warnings).toContainEqual({ code: 'linear-collinear', message, count: 1 });
    expect(model(manifest, 'linear').used).toEqual({ dropped: ['x2'], collinear: ['x2 (a linear combination of x1)'] });
    expect(metric(manifest, 'linear', 'holdout', 'r2').value).not.toBeNull();
  });

  it('every predictor constant stops the run with exit 1 naming them', async () => {
    const s = scenario({ 'data/obs.csv': withPredictors(() => ['1', '2']) });
    await expectOutcome(s.dir, runArgs(s), { code: 1, err: messages.predictorsAllConstant(['x1', 'x2']) });
  });

  it('one constant predictor is a warning naming it', async () => {
    const { manifest } = await runOk({ 'data/obs.csv': withPredictors((x1) => [String(x1), '4']) });
    expect(manifest.warnings).toContainEqual({ code: 'constant-predictor', message: messages.predictorConstant('x2'), count: 1 });
  });

  it('an engine error is a message naming the model and the fold, not an internal error', async () => {
    // 60 rows: 45 for training, about 30 per fold's fit, fewer than 2 × min_leaf
    const recipe = SMALL_RECIPE.replace('  mean: {kind: mean}\n', '  mean: {kind: mean}\n  tree: {kind: decision_tree, grid: {min_leaf: [20]}}\n');
    const s = scenario({ 'recipe.yaml': recipe });
    const r = await expectOutcome(s.dir, runArgs(s), { code: 1 });
    const [prefix] = messages.modelEngineFailed('tree', '\u0000', '').split('\u0000');
    expect(r.err).toContain(`${prefix}cross-validation fold 1 of 3, `);
    const rows = Number(/only (\d+) rows, but min_leaf/.exec(r.err)?.[1]);
    expect(r.err).toContain(engineMessages.tooFewRows(rows, 20));
  });
});
