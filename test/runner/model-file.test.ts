/**
 * model.dendro: every model the run fitted, each with its fold models behind it by length; the
 * older headline-only layouts (model.dendro 2, model.bin) are still read and written byte for byte.
 */
import { gzipSync } from 'node:zlib';
import { describe, expect, it } from 'vitest';
import { modelEntry, modelFileLayout, pickModel, readModelFile, writeModelFile } from '../../runner/model-file.js';
import type { FitOutput, IntervalFoldOutput, PredictionIntervalOutput } from '../../steps/index.js';
import { DendrologError } from '../../core/messages.js';

const b64 = (bytes: number[]) => Uint8Array.from(bytes);
const fit = (model: string, bytes: number[]) =>
  ({ model, kind: 'linear', cell: {}, used: {}, design: { predictors: ['x'] }, ranges: {}, trainingRows: 10, bytes: b64(bytes) }) as unknown as FitOutput;
const TABLE = { folds: [{ residuals: [0.5], cumulative: [1] }, { residuals: [1], cumulative: [1] }], units: 2 };
const interval = (a: number[], b: number[]) => ({
  output: { level: 0.5, unitKind: 'rows', table: TABLE } as PredictionIntervalOutput,
  folds: [
    { design: { predictors: ['x'], k: 0 }, bytes: b64(a) },
    { design: { predictors: ['x'], k: 1 }, bytes: b64(b) },
  ] as unknown as IntervalFoldOutput[],
});
const RUN = { holdoutPredictionsSha256: 'a'.repeat(64) };
const bundle = (withIntervals: boolean) => ({
  target: 'y',
  run: RUN,
  headline: 'forest',
  models: [
    modelEntry({ fit: fit('mean', [1]), interval: withIntervals ? interval([2], [3, 3]) : null }),
    modelEntry({ fit: fit('forest', [4, 4, 4]), interval: withIntervals ? interval([5], [6, 6]) : null }),
  ],
});

describe('model.dendro', () => {
  it('keeps every model with its fold models, designs and residual table, and the headline by name', () => {
    const file = writeModelFile(bundle(true));
    expect(Buffer.from(file.subarray(0, 18)).toString('latin1')).toBe('dendrolog model 3\n');
    const read = readModelFile(file);
    expect([read.layout, read.headline, read.target, read.run]).toEqual([3, 'forest', 'y', RUN]);
    expect(read.models.map((m) => [m.model, Array.from(m.bytes), m.interval!.folds.map((f) => Array.from(f.bytes))])).toEqual([
      ['mean', [1], [[2], [3, 3]]],
      ['forest', [4, 4, 4], [[5], [6, 6]]],
    ]);
    expect(read.models[1].interval!.folds.map((f) => f.design)).toEqual([
      { predictors: ['x'], k: 0 },
      { predictors: ['x'], k: 1 },
    ]);
    expect([read.models[1].interval!.level, read.models[1].interval!.unitKind, read.models[1].interval!.table]).toEqual([0.5, 'rows', TABLE]);
    const plain = readModelFile(writeModelFile(bundle(false)));
    expect(plain.models.map((m) => [Array.from(m.bytes), m.interval])).toEqual([
      [[1], undefined],
      [[4, 4, 4], undefined],
    ]);
  });

  it('writes and reads the older headline-only layouts: "dendrolog model 2", and model.bin without that line', () => {
    for (const withIntervals of [true, false]) {
      const two = writeModelFile({ ...bundle(withIntervals), layout: 2 });
      const one = writeModelFile({ ...bundle(withIntervals), layout: 1 });
      expect(Buffer.from(two.subarray(0, 18)).toString('latin1')).toBe('dendrolog model 2\n');
      // model.bin was the same bytes without the first line
      expect(Buffer.from(one).equals(Buffer.from(two.subarray(18)))).toBe(true);
      expect([modelFileLayout(two), modelFileLayout(one)]).toEqual([2, 1]);
      for (const f of [one, two]) {
        const read = readModelFile(f);
        expect([read.headline, read.models.map((m) => m.model), Array.from(read.models[0].bytes)]).toEqual(['forest', ['forest'], [4, 4, 4]]);
        expect(read.models[0].interval?.folds.map((x) => Array.from(x.bytes))).toEqual(withIntervals ? [[5], [6, 6]] : undefined);
      }
    }
  });

  it('reads a headline-only file as the version before every model was kept wrote it (its header, key for key)', () => {
    // the header an older dendrolog wrote, without intervals: its model bytes are all that follows
    const header = Buffer.from(JSON.stringify({ format: 1, model: 'tree', kind: 'tree', cell: { max_depth: 3 }, used: {}, design: { predictors: ['x'] }, ranges: {}, target: 'y', trainingRows: 5, run: RUN }));
    const len = Buffer.alloc(4);
    len.writeUInt32LE(header.length, 0);
    const body = gzipSync(Buffer.concat([Buffer.from('DLM1', 'latin1'), len, header, Buffer.from([9, 8, 7])]));
    const read = readModelFile(Buffer.concat([Buffer.from('dendrolog model 2\n', 'latin1'), body]));
    expect([read.layout, read.headline, read.models.length, read.models[0].cell, Array.from(read.models[0].bytes)]).toEqual([2, 'tree', 1, { max_depth: 3 }, [9, 8, 7]]);
    // and written again from what was read, byte for byte
    expect(Buffer.from(writeModelFile(read)).equals(Buffer.concat([Buffer.from('dendrolog model 2\n', 'latin1'), gzipSync(Buffer.concat([Buffer.from('DLM1', 'latin1'), len, header, Buffer.from([9, 8, 7])]), { level: 1 })]))).toBe(true);
  });

  it('refuses a file whose header lists other lengths than the models behind it', () => {
    const header = Buffer.from(JSON.stringify({ format: 1, bytesLength: 3, interval: { level: 0.9, unitKind: 'rows', table: TABLE, folds: [{ design: {}, bytesLength: 5 }] } }));
    const len = Buffer.alloc(4);
    len.writeUInt32LE(header.length, 0);
    const file = gzipSync(Buffer.concat([Buffer.from('DLM1', 'latin1'), len, header, Buffer.from([1, 2, 3, 4])]));
    expect(() => readModelFile(file)).toThrow('the model header lists 8 bytes of models, but 4 follow it');
    const three = Buffer.from(JSON.stringify({ format: 3, target: 'y', headline: 'a', models: [{ model: 'a', bytesLength: 2 }, { model: 'b', bytesLength: 2 }] }));
    len.writeUInt32LE(three.length, 0);
    const threeFile = Buffer.concat([Buffer.from('dendrolog model 3\n', 'latin1'), gzipSync(Buffer.concat([Buffer.from('DLM1', 'latin1'), len, three, Buffer.from([1, 2, 3])]))]);
    expect(() => readModelFile(threeFile)).toThrow('the model header lists 4 bytes of models, but 3 follow it');
  });

  it('picks the headline, or a model by name; an unknown name is refused with the names the file holds', () => {
    const read = readModelFile(writeModelFile(bundle(false)));
    expect(pickModel(read, undefined, 'out/model.dendro').model).toBe('forest');
    expect(pickModel(read, 'mean', 'out/model.dendro').model).toBe('mean');
    expect(() => pickModel(read, 'foresst', 'out/model.dendro')).toThrow(DendrologError);
    expect(() => pickModel(read, 'foresst', 'out/model.dendro')).toThrow(
      '--model foresst: out/model.dendro holds no model of that name; did you mean "forest"? The run fitted "mean", "forest"; name one of them, or leave out --model for the one it chose',
    );
    // a name like a property of every object is just another unknown name
    expect(() => pickModel(read, '__proto__', 'out/model.dendro')).toThrow('--model __proto__: out/model.dendro holds no model of that name. The run fitted "mean", "forest"; name one of them');
    const old = readModelFile(writeModelFile({ ...bundle(false), layout: 2 }));
    expect(() => pickModel(old, 'mean', 'out/model.dendro')).toThrow(
      '--model mean: out/model.dendro was written by an older dendrolog and holds the headline model "forest" alone; run the recipe again to keep every model it fits',
    );
  });
});
