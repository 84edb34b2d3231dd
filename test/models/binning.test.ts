/**
 * Quantile binning of predictor columns.
 */
import { describe, expect, it } from 'vitest';
import { binColumns, midpoint } from '../../models/binning.js';
import { rngFor } from '../../models/rng.js';

describe('binColumns', () => {
  it('gives every distinct value its own bin when there are at most maxBins of them', () => {
    const col = Float64Array.from([3, 1, 2, 3, 1, 7.5]);
    const b = binColumns([col], 256);
    expect(b.nBins[0]).toBe(4);
    expect(Array.from(b.binMin)).toEqual([1, 2, 3, 7.5]);
    expect(Array.from(b.binMax)).toEqual([1, 2, 3, 7.5]);
    expect(Array.from(b.codes)).toEqual([2, 0, 1, 2, 0, 3]);
  });

  it('groups many distinct values into at most maxBins ordered bins of similar size', () => {
    const g = rngFor('bins', 'test');
    const n = 10000;
    const col = Float64Array.from({ length: n }, () => g.float());
    const b = binColumns([col, col.map((v) => Math.round(v * 3))], 256);
    expect(b.nBins[0]).toBe(256);
    expect(b.nBins[1]).toBe(4);
    const sizes = new Array<number>(256).fill(0);
    for (let r = 0; r < n; r++) {
      const code = b.codes[r * 2];
      sizes[code]++;
      // Every raw value lies inside its bin's [min, max].
      expect(col[r] >= b.binMin[code] && col[r] <= b.binMax[code]).toBe(true);
    }
    expect(Math.min(...sizes)).toBeGreaterThan(n / 256 / 2);
    expect(Math.max(...sizes)).toBeLessThan((n / 256) * 2);
    for (let k = 1; k < 256; k++) expect(b.binMin[k]).toBeGreaterThan(b.binMax[k - 1]);
  });

  it('gives a heavily repeated value a bin of its own', () => {
    const col = Float64Array.from({ length: 1000 }, (_, i) => (i < 600 ? 0 : i));
    const b = binColumns([col], 16);
    expect(b.binMin[0]).toBe(0);
    expect(b.binMax[0]).toBe(0);
  });
});

describe('midpoint', () => {
  it('is the midpoint, and stays below the upper value for adjacent doubles and huge ranges', () => {
    expect(midpoint(1, 2)).toBe(1.5);
    const a = 1;
    const c = 1 + Number.EPSILON;
    expect(midpoint(a, c)).toBe(a);
    expect(midpoint(-Number.MAX_VALUE, Number.MAX_VALUE)).toBe(0);
    expect(midpoint(Number.MAX_VALUE / 2, Number.MAX_VALUE)).toBeLessThan(Number.MAX_VALUE);
  });
});
