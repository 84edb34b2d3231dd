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

  it('codes every value into the bin that holds it, for skewed, clustered and extreme columns', () => {
    const g = rngFor('bins', 'skewed');
    const n = 5000;
    const columns = [
      Float64Array.from({ length: n }, () => Math.exp(20 * g.float())),
      Float64Array.from({ length: n }, () => (g.float() < 0.9 ? g.float() * 1e-9 : 1e9 + g.float())),
      Float64Array.from({ length: n }, () => (g.float() < 0.5 ? -Number.MAX_VALUE : Number.MAX_VALUE) * g.float()),
      Float64Array.from({ length: n }, (_, i) => (i % 3 === 0 ? 1 : 1 + Number.EPSILON * (i % 7))),
      Float64Array.from({ length: n }, () => 1 - Number.EPSILON * Math.floor(300 * g.float())),
    ];
    for (const maxBins of [2, 17, 256]) {
      const b = binColumns(columns, maxBins);
      for (let f = 0; f < columns.length; f++) {
        const off = b.offsets[f];
        for (let r = 0; r < n; r++) {
          const code = b.codes[r * columns.length + f];
          const v = columns[f][r];
          expect(code).toBeLessThan(b.nBins[f]);
          expect(v >= b.binMin[off + code] && v <= b.binMax[off + code]).toBe(true);
        }
      }
    }
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
