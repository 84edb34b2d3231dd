import { readFileSync } from 'node:fs';
import { describe, expect, it } from 'vitest';
import { deserializeMean, fitMean, meanOf, MeanModelError, predictMean, serializeMean, type MeanModel } from '../../models/mean.js';
import { r2 } from '../../models/metrics.js';

function catchError(f: () => unknown): MeanModelError {
  try {
    f();
  } catch (e) {
    expect(e).toBeInstanceOf(MeanModelError);
    return e as MeanModelError;
  }
  throw new Error('expected a MeanModelError, but nothing was thrown');
}

/** A response column from a fixture exported from R (see fixtures/linear/README.md). */
function column(file: string, name: string): Float64Array {
  const lines = readFileSync(new URL(`./fixtures/linear/${file}`, import.meta.url), 'utf8').trim().split('\n');
  const j = lines[0].split(',').indexOf(name);
  return Float64Array.from(lines.slice(1), (line) => Number(line.split(',')[j]));
}

describe('fitMean / predictMean', () => {
  it('fits the arithmetic mean and predicts it for every row', () => {
    const m = fitMean(new Float64Array([1, 2, 6]));
    expect(m).toEqual({ kind: 'mean', value: 3 });
    expect(Array.from(predictMean(m, 4))).toEqual([3, 3, 3, 3]);
    expect(predictMean(m, 0).length).toBe(0);
  });

  it('corrects the rounding of a single running sum', () => {
    // Summing ten copies of 0.1 and dividing by 10 gives 0.09999999999999999 (IEEE 754
    // double arithmetic); the correction pass restores the correctly rounded 0.1.
    expect(meanOf(new Float64Array(10).fill(0.1))).toBe(0.1);
  });

  it.each([
    ['Longley Employed', column('longley.csv', 'Employed')],
    ['swiss Fertility', column('swiss.csv', 'Fertility')],
  ])('has training R² of 0 on %s', (_label, y) => {
    // R² = 1 - SS_res/SS_tot and the training mean makes SS_res = SS_tot, so R² is 0; as
    // scikit-learn's r2_score documentation puts it, "a constant model that always predicts
    // the expected value of y ... would get an R² score of 0.0". Rounding in the two mean
    // computations may leave a few ulps.
    const m = fitMean(y);
    const { value } = r2(y, predictMean(m, y.length));
    expect(value).not.toBeNull();
    expect(Math.abs(value!)).toBeLessThan(1e-14);
  });

  it('leaves R² undefined, with a reason, when the training response is constant', () => {
    // models/metrics.ts: SS_tot = 0 gives no denominator.
    const y = new Float64Array([4, 4, 4]);
    const result = r2(y, predictMean(fitMean(y), 3));
    expect(result.value).toBeNull();
    expect(result.reason).toContain('constant');
  });
});

describe('mean errors', () => {
  it('refuses an empty response', () => {
    expect(catchError(() => fitMean(new Float64Array(0))).message).toContain('zero rows');
  });

  it('names the 0-based row of a NaN or Infinity', () => {
    expect(catchError(() => fitMean(new Float64Array([1, NaN, 3]))).message).toContain('NaN at row 1 (rows counted from 0)');
    expect(catchError(() => fitMean(new Float64Array([1, 2, -Infinity]))).message).toContain('-Infinity at row 2');
  });

  it('refuses a row count that is not a non-negative integer', () => {
    const m: MeanModel = { kind: 'mean', value: 1 };
    expect(catchError(() => predictMean(m, -1)).message).toContain('non-negative integer');
    expect(catchError(() => predictMean(m, 1.5)).message).toContain('non-negative integer');
  });
});

describe('serializeMean / deserializeMean', () => {
  const bits = (v: number): Uint8Array => new Uint8Array(Float64Array.of(v).buffer);

  it.each([3, 0.1 + 0.2, -0, 5e-324, -Number.MAX_VALUE, 65317])('round-trips %d bit for bit', (value) => {
    const m: MeanModel = { kind: 'mean', value };
    const bytes = serializeMean(m);
    const back = deserializeMean(bytes);
    expect(back.kind).toBe('mean');
    expect(bits(back.value)).toEqual(bits(value));
    expect(serializeMean(back)).toEqual(bytes);
  });

  it('reads from a view that does not start at offset 0', () => {
    const bytes = serializeMean({ kind: 'mean', value: 0.7 });
    const padded = new Uint8Array(bytes.length + 5);
    padded.set(bytes, 5);
    expect(deserializeMean(padded.subarray(5)).value).toBe(0.7);
  });

  it('rejects foreign, truncated and future-version bytes', () => {
    const good = serializeMean({ kind: 'mean', value: 1 });
    expect(catchError(() => deserializeMean(good.subarray(0, 12))).message).toContain('not a serialized mean model');
    const foreign = good.slice();
    foreign[0] = 0x7b;
    expect(catchError(() => deserializeMean(foreign)).message).toContain('not a serialized mean model');
    const future = good.slice();
    future[4] = 9;
    expect(catchError(() => deserializeMean(future)).message).toContain('format version 9');
  });
});
