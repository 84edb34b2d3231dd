/** The explain step called directly: permutation importance and partial dependence on constructed cases. */
import { describe, expect, it } from 'vitest';
import type { Frame } from '../../core/frame.js';
import { messages } from '../../core/messages.js';
import type { ModelKind } from '../../core/recipe-types.js';
import type { ChooseOutput } from '../../steps/choose.js';
import { explain, type ExplainOutput, type ExplainParams } from '../../steps/explain.js';
import { fit, type FitOutput } from '../../steps/fit.js';
import { engineFor } from '../../steps/model-kinds.js';
import type { HoldoutOutput } from '../../steps/holdout.js';
import { asOutput, decoded, errorOf, stepContext, NO_UNITS } from '../helpers.js';
import { FRIEDMAN_NAMES, friedman1 } from '../bench/friedman.js';

/**
 * y = 3·x1 exactly; x2 is unrelated noise. Rows 0–7 train (x1 = 1..8), rows 8–13 are held out.
 */
const X1 = [1, 2, 3, 4, 5, 6, 7, 8, 2, 3, 5, 6, 8, 9];
const X2 = [7, 2, 9, 4, 1, 8, 3, 6, 5, 1, 7, 2, 9, 4];

function frameOf(x1 = X1): Frame {
  return {
    rows: X1.length,
    columns: [
      { name: 'x1', type: 'number', values: Float64Array.from(x1) },
      { name: 'x2', type: 'number', values: Float64Array.from(X2) },
      { name: 'y', type: 'number', values: Float64Array.from(X1.map((v) => 3 * v)) },
    ],
  };
}

const frame = frameOf();
const split: HoldoutOutput = { train: [0, 1, 2, 3, 4, 5, 6, 7], test: [8, 9, 10, 11, 12, 13], by: 'random', trainGroups: 0, testGroups: 0, cutoff: null, gapRows: 0, units: NO_UNITS };
const TEST_X1 = [2, 3, 5, 6, 8, 9];

const chosen: ChooseOutput = {
  cells: [{ cell: {}, pooled: { r2: { value: null }, rmse: { value: null }, mae: { value: null }, bias: { value: null }, n: 0 }, perFold: { r2: { mean: null, sd: null }, rmse: { mean: null, sd: null }, mae: { mean: null, sd: null }, bias: { mean: null, sd: null } }, used: [], failed: null }],
  chosen: 0,
  choose_by: 'rmse',
  failed: null,
};

async function fitted(kind: ModelKind, cell: Record<string, unknown> = {}): Promise<FitOutput> {
  return decoded<FitOutput>('record', await fit.run([asOutput(frame), split, { ...chosen, cells: [{ ...chosen.cells[0], cell }] }], { model: kind, kind, target: 'y', predictors: ['x1', 'x2'], features: [] }, stepContext()));
}

const PARAMS: ExplainParams = { target: 'y', repeats: 5, top: 1, points: 3, sampleRows: 100 };

async function run(model: FitOutput, f: Frame = frame): Promise<ExplainOutput> {
  return (await explain.run([asOutput(f), split, model], PARAMS, stepContext())) as ExplainOutput;
}

describe('explain', () => {
  it('ranks the informative predictor above pure noise', async () => {
    const out = await run(await fitted('linear'));
    expect(out.importance.map((i) => i.predictor)).toEqual(['x1', 'x2']);
    // the fitted plane is y = 3·x1 (x2's coefficient is rounding), so the baseline error is rounding too
    expect(out.baselineMse).toBeLessThan(1e-18);
    // shuffling x1 among held-out rows raises the MSE by 9·mean((x1[π] − x1)²): above 0 unless every
    // shuffle left x1 in place, and by the rearrangement inequality at most 9·mean((x1 − reversed x1)²)
    const reversed = [...TEST_X1].reverse();
    const most = (9 * TEST_X1.reduce((s, v, i) => s + (v - reversed[i]) ** 2, 0)) / TEST_X1.length;
    expect(out.importance[0].mean).toBeGreaterThan(0);
    expect(out.importance[0].mean).toBeLessThanOrEqual(most + 1e-9);
    // x2's coefficient is rounding (about 1e-15), so shuffling it moves predictions by about that much
    expect(Math.abs(out.importance[1].mean)).toBeLessThan(1e-18);
    expect(out.repeats).toBe(5);
  });

  it('draws a partial dependence curve with the fitted slope at the 5th, 50th and 95th percentiles', async () => {
    const out = await run(await fitted('linear'));
    expect(out.partialDependence).toHaveLength(1);
    const [pd] = out.partialDependence;
    expect([pd.predictor, pd.kind]).toEqual(['x1', 'number']);
    // type-7 quantiles of x1 = 1..8 at 0.05, 0.5, 0.95: 1 + 7·q = 1.35, 4.5, 7.65
    const xs = pd.points.map((p) => p.x as number);
    [1.35, 4.5, 7.65].forEach((x, i) => expect(xs[i]).toBeCloseTo(x, 12));
    // for an additive model, the curve is the predictor's own term: y = 3·x
    pd.points.forEach((p) => expect(Math.abs(p.y - 3 * (p.x as number))).toBeLessThan(1e-9));
    // all 8 training rows are averaged over, fewer than sampleRows
    expect([out.pdRows, out.pdMethod]).toEqual([8, 'rows']);
  });

  it('walks a decision tree for partial dependence: the same curve as averaging its predictions over the training rows', async () => {
    const model = await fitted('decision_tree', { max_depth: null, min_leaf: 1 });
    const out = await run(model);
    expect([out.pdRows, out.pdMethod]).toEqual([8, 'traversal']);
    const [pd] = out.partialDependence;
    // the definition: set x1 to the point's value in every training row, predict, average
    const engine = await engineFor('decision_tree', 'tree').load(model.bytes, 'test');
    for (const p of pd.points) {
      const x = { names: ['x1', 'x2'], rows: 8, columns: [new Float64Array(8).fill(p.x as number), Float64Array.from(X2.slice(0, 8))] };
      const brute = await engine.predict(x, 'test');
      expect(p.y).toBeCloseTo(brute.reduce((a, b) => a + b, 0) / 8, 12);
    }
  });

  it('gives every predictor exactly zero importance under the mean model, ties in name order', async () => {
    const out = await run(await fitted('mean'));
    // the prediction ignores the predictors, so no shuffle changes it
    expect(out.importance).toEqual([
      { predictor: 'x1', mean: 0, sd: 0 },
      { predictor: 'x2', mean: 0, sd: 0 },
    ]);
    // held-out y = 6, 9, 15, 18, 24, 27 against the training mean 3·4.5 = 13.5
    const y = TEST_X1.map((v) => 3 * v);
    expect(out.baselineMse).toBeCloseTo(y.reduce((s, v) => s + (v - 13.5) ** 2, 0) / y.length, 12);
    // and a flat partial dependence curve at the training mean
    out.partialDependence[0].points.forEach((p) => expect(p.y).toBe(13.5));
  });

  it('ranks x1, x2 and x4 of Friedman #1 above the noise predictors x6..x10 under a random forest', async () => {
    // Source: Friedman (1991), eq. 43: y depends on x1..x5 only; x4 (linear, coefficient 10) and
    // x1, x2 (in sin(π x1 x2)) carry the most signal, x6..x10 none.
    const train = friedman1(600, 'explain-train');
    const test = friedman1(300, 'explain-test');
    const f: Frame = {
      rows: 900,
      columns: [
        ...FRIEDMAN_NAMES.map((name, j) => ({ name, type: 'number' as const, values: Float64Array.from([...train.x.columns[j], ...test.x.columns[j]]) })),
        { name: 'y', type: 'number', values: Float64Array.from([...train.y, ...test.y]) },
      ],
    };
    const s: HoldoutOutput = { train: [...Array(600).keys()], test: Array.from({ length: 300 }, (_, k) => 600 + k), by: 'random', trainGroups: 0, testGroups: 0, cutoff: null, gapRows: 0, units: NO_UNITS };
    const cell = { trees: 100, max_depth: null, min_leaf: 3, mtry: null, sample_fraction: 1, replace: true };
    const forest = decoded<FitOutput>('record', await fit.run([asOutput(f), s, { ...chosen, cells: [{ ...chosen.cells[0], cell }] }], { model: 'forest', kind: 'random_forest', target: 'y', predictors: FRIEDMAN_NAMES, features: [] }, stepContext()));
    const out = (await explain.run([asOutput(f), s, forest], { ...PARAMS, repeats: 3, top: 0 }, stepContext())) as ExplainOutput;
    const rise = (p: string) => out.importance.find((i) => i.predictor === p)!.mean;
    const noise = Math.max(...['x6', 'x7', 'x8', 'x9', 'x10'].map(rise));
    for (const p of ['x1', 'x2', 'x4']) expect(rise(p)).toBeGreaterThan(noise);
    for (const i of out.importance) expect(i.sd).toBeGreaterThanOrEqual(0);
    // the held-out frame the step permuted is the caller's, unchanged
    expect(f.columns[0].values.slice(600, 603)).toEqual(test.x.columns[0].slice(0, 3));
  });

  it('gives the same answer twice for the same seed', async () => {
    const model = await fitted('linear');
    expect(await run(model)).toEqual(await run(model));
  });

  it('stops on a missing held-out predictor value no feature step fills', async () => {
    const model = await fitted('linear');
    const gap = frameOf(X1.map((v, i) => (i === 12 ? NaN : v)));
    const e = await errorOf(() => run(model, gap));
    expect([e.message, e.exitCode]).toEqual([messages.missingInPredictor('x1', 1), 1]);
  });
});
