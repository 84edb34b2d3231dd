import { describe, expect, it } from 'vitest';
import { DendrologError, messages } from '../../core/messages.js';
import { engineMessages } from '../../models/engine-errors.js';
import { engineFor, modelKinds } from '../../steps/model-kinds.js';
import { bytesOf } from '../../core/codec.js';

/** 40 rows × p columns of small integers, and a target that depends on the first two. */
function matrix(p: number) {
  const rows = 40;
  const columns = Array.from({ length: p }, (_, j) => Float64Array.from({ length: rows }, (_, i) => ((i * (j + 3)) % 7) + (j === 0 ? i : 0)));
  const y = Float64Array.from({ length: rows }, (_, i) => columns[0][i] + 2 * columns[1][i]);
  return { x: { columns, names: columns.map((_, j) => `x${j}`), rows }, y };
}

const cell = { trees: 3, max_depth: 2, min_leaf: 3, sample_fraction: 1, replace: true };

describe('the random forest adapter', () => {
  it('records the mtry count the engine used: 0.29 of 100 predictors is 29 (0.29 × 100 is 28.999… in floating point)', async () => {
    const { x, y } = matrix(100);
    const fitted = await modelKinds.random_forest.fit(x, y, { ...cell, mtry: 0.29 }, { seed: 's', workers: 1 });
    expect(fitted.used.mtry).toBe(29);
  });

  it('records a third of the predictors, rounded down, for mtry null', async () => {
    const { x, y } = matrix(10);
    const fitted = await modelKinds.random_forest.fit(x, y, { ...cell, mtry: null }, { seed: 's', workers: 1 });
    expect(fitted.used.mtry).toBe(3);
  });
});

describe('the engine boundary', () => {
  it('turns an engine input error in a prediction into a message naming the model and where', async () => {
    const { x, y } = matrix(3);
    const engine = engineFor('random_forest', 'forest');
    const fitted = await engine.fit(x, y, { ...cell, mtry: null }, { seed: 's', workers: 1 }, 'a fit');
    const renamed = { ...x, names: [...x.names].reverse() };
    const e = (await engine.predict(bytesOf(fitted.bytes), renamed, 'prediction of the new rows').catch((err: unknown) => err)) as DendrologError;
    expect(e).toBeInstanceOf(DendrologError);
    expect([e.message, e.exitCode]).toEqual([messages.modelEngineFailed('forest', 'prediction of the new rows', engineMessages.namesDiffer(x.names, renamed.names)), 1]);
  });

  it('turns a linear model error into a message too, and lets anything else through unchanged', async () => {
    const { x, y } = matrix(3);
    const engine = engineFor('linear', 'line');
    const e = (await engine.fit({ ...x, rows: 0, columns: x.columns.map(() => new Float64Array(0)) }, new Float64Array(0), {}, { seed: 's', workers: 1 }, 'a fit').catch((err: unknown) => err)) as Error;
    expect(e).toBeInstanceOf(DendrologError);
    expect(e.message.startsWith(messages.modelEngineFailed('line', 'a fit', ''))).toBe(true);
    // a call no caller should make (no matrix at all) is a bug, not an input error: it passes through as it is
    const forest = engineFor('random_forest', 'forest');
    const fitted = await forest.fit(x, y, { ...cell, mtry: null }, { seed: 's', workers: 1 }, 'a fit');
    const bug = (await forest.predict(bytesOf(fitted.bytes), null as never, 'here').catch((err: unknown) => err)) as Error;
    expect(bug).toBeInstanceOf(TypeError);
  });
});
