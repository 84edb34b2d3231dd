/** model.dendro with prediction intervals: the fold models ride behind the headline model, each by its length. */
import { gzipSync } from 'node:zlib';
import { describe, expect, it } from 'vitest';
import { readModelFile, writeModelFile } from '../../runner/model-file.js';
import type { FitOutput, IntervalFoldOutput, PredictionIntervalOutput } from '../../steps/index.js';
import type { Recipe } from '../../core/recipe-types.js';

const b64 = (bytes: number[]) => Uint8Array.from(bytes);
const FIT = { model: 'm', kind: 'linear', cell: {}, used: {}, design: { predictors: ['x'] }, ranges: {}, trainingRows: 10, bytes: b64([1, 2, 3]) } as unknown as FitOutput;
const TABLE = { folds: [{ residuals: [0.5], cumulative: [1] }, { residuals: [1], cumulative: [1] }], units: 2 };
const INTERVAL = {
  output: { level: 0.5, unitKind: 'rows', table: TABLE } as PredictionIntervalOutput,
  folds: [
    { design: { predictors: ['x'], k: 0 }, bytes: b64([7]) },
    { design: { predictors: ['x'], k: 1 }, bytes: b64([8, 9]) },
  ] as unknown as IntervalFoldOutput[],
};
const RECIPE = { target: 'y' } as Recipe;
const RUN = { holdoutPredictionsSha256: 'a'.repeat(64) };

describe('model.dendro', () => {
  it('keeps the fold models, their designs and the residual table, and reads a file without them as before', () => {
    const m = readModelFile(writeModelFile(FIT, INTERVAL, RECIPE, RUN));
    expect(Array.from(m.bytes)).toEqual([1, 2, 3]);
    expect(m.interval!.folds.map((f) => [Array.from(f.bytes), f.design])).toEqual([
      [[7], { predictors: ['x'], k: 0 }],
      [[8, 9], { predictors: ['x'], k: 1 }],
    ]);
    expect([m.interval!.level, m.interval!.unitKind, m.interval!.table]).toEqual([0.5, 'rows', TABLE]);
    const plain = readModelFile(writeModelFile(FIT, null, RECIPE, RUN));
    expect([Array.from(plain.bytes), plain.interval]).toEqual([[1, 2, 3], undefined]);
  });

  it('refuses a file whose header lists other lengths than the models behind it', () => {
    const header = Buffer.from(JSON.stringify({ format: 1, bytesLength: 3, interval: { level: 0.9, unitKind: 'rows', table: TABLE, folds: [{ design: {}, bytesLength: 5 }] } }));
    const len = Buffer.alloc(4);
    len.writeUInt32LE(header.length, 0);
    const file = gzipSync(Buffer.concat([Buffer.from('DLM1', 'latin1'), len, header, Buffer.from([1, 2, 3, 4])]));
    expect(() => readModelFile(file)).toThrow('the model header lists 8 bytes of models, but 4 follow it');
  });
});
