/** The grid heat map's squares: the colour scale's span, the one-standard-error marks, readable labels. */
import { describe, expect, it } from 'vitest';
import { contrastRatio, mix, readableInk, relativeLuminance } from '../../runner/contrast.js';
import { gridHeatmap, HEAT_DARK, HEAT_LIGHT } from '../../runner/grid-heatmap.js';
import type { Results } from '../../runner/results.js';

/** A model of four cells over depth × leaf, scored by RMSE, the chosen one's per-fold sd given. */
function model(rmse: number[], sd: number, chosen = 0): Results['models'][number] {
  const cells = rmse.map((v, i) => ({
    cell: { depth: [2, 4][i % 2], leaf: [1, 5][Math.floor(i / 2)] },
    pooled: { rmse: { value: v }, r2: { value: 1 - v }, mae: { value: v }, bias: { value: 0 }, n: 10 },
    perFold: { rmse: { mean: v, sd }, r2: { mean: 1 - v, sd }, mae: { mean: v, sd }, bias: { mean: 0, sd } },
  }));
  return { cells, chosen } as unknown as Results['models'][number];
}

describe('the grid heat map', () => {
  it('spans at least four standard errors of the chosen cell, so squares within noise look alike, and marks those within one', () => {
    // sd 0.02 over 4 folds: SE 0.01; the squares differ by at most 0.005
    const h = gridHeatmap(model([0.211, 0.213, 0.216, 0.2125], 0.02), ['depth', 'leaf'], 'rmse', 4)!;
    expect(h.se).toBeCloseTo(0.01, 12);
    expect([h.best, h.worst]).toEqual([0.211, 0.211 + 4 * 0.01]);
    expect(h.cells.map((c) => [c.label, c.chosen, c.near])).toEqual([
      ['0.211', true, false],
      ['0.213', false, true],
      ['0.216', false, true],
      ['0.213', false, true],
    ]);
    // the worst square is only an eighth of the way from the best colour
    expect(h.cells[2].fill).toBe(mix(HEAT_LIGHT, HEAT_DARK, (0.216 - 0.251) / (0.211 - 0.251)));
  });

  it('spans the squares themselves when they differ by more than the noise, higher better for R²', () => {
    const h = gridHeatmap(model([0.1, 0.5, 0.3, 0.2], 0.004, 0), ['depth', 'leaf'], 'r2', 4)!;
    // R² is 1 − v here: best 0.9, worst 0.5
    expect([h.best, h.worst]).toEqual([0.9, 0.5]);
    expect(h.cells.filter((c) => c.near)).toEqual([]);
    expect(h.cells[0].fill).toBe(HEAT_DARK);
    expect(h.cells[1].fill).toBe(HEAT_LIGHT);
  });

  it('needs two varying hyperparameters', () => {
    expect(gridHeatmap(model([0.1, 0.2, 0.3, 0.4], 0.01), ['depth'], 'rmse', 4)).toBeNull();
  });
});

describe('label colours (WCAG 2.x relative luminance and contrast ratio)', () => {
  it('match the standard at its ends: white 1, black 0, black on white 21:1', () => {
    expect(relativeLuminance('#ffffff')).toBe(1);
    expect(relativeLuminance('#000000')).toBe(0);
    expect(contrastRatio('#000000', '#ffffff')).toBe(21);
    // #767676 on white is the well-known lightest grey that passes 4.5:1 (common practice)
    expect(contrastRatio('#767676', '#ffffff')).toBeGreaterThanOrEqual(4.5);
    expect(contrastRatio('#777777', '#ffffff')).toBeLessThan(4.5);
  });

  it('give black or white at 4.5:1 or more on every grey and on every step of the heat scale', () => {
    for (let v = 0; v <= 255; v++) {
      const grey = mix('#000000', '#ffffff', v / 255);
      expect(contrastRatio(readableInk(grey), grey)).toBeGreaterThanOrEqual(4.5);
    }
    for (let t = 0; t <= 1; t += 0.01) {
      const bg = mix(HEAT_LIGHT, HEAT_DARK, t);
      expect(contrastRatio(readableInk(bg), bg)).toBeGreaterThanOrEqual(4.5);
    }
  });
});
