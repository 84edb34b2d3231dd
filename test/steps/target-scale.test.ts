/**
 * Each target scale's inverse undoes the transform a recipe writes in a derive step: arquero's own
 * op.log10, op.log and op.log1p (the functions the expressions call) are the forward side.
 */
import { op } from 'arquero';
import { describe, expect, it } from 'vitest';
import { TARGET_SCALES } from '../../steps/target-scale.js';

// from a trace concentration to a large count, zero included where the transform allows it
const VALUES = [1e-9, 0.003, 0.26, 1, 4.54, 54.6, 6486.8, 1.5e7, 1e300];
const FORWARD = { log10: (v: number) => op.log10(v), ln: (v: number) => op.log(v), log1p: (v: number) => op.log1p(v) } as const;

describe('target scales', () => {
  it('round-trip every value to within a few units of the last place', () => {
    for (const [scale, forward] of Object.entries(FORWARD) as [keyof typeof FORWARD, (v: number) => number][]) {
      for (const v of scale === 'log1p' ? [0, ...VALUES] : VALUES) {
        const back = TARGET_SCALES[scale].inverse(forward(v));
        expect(Math.abs(back - v) / Math.max(v, Number.MIN_VALUE), `${scale} of ${v}`).toBeLessThan(4e-15 * Math.max(1, Math.abs(Math.log(v || 1))));
      }
    }
  });

  it('keep log1p exact near zero, where exp(x) − 1 would lose the digits', () => {
    // 1e-12 through log1p and back: expm1 keeps it to the last place, exp(x) - 1 to about 1e-4 relative
    expect(TARGET_SCALES.log1p.inverse(op.log1p(1e-12))).toBeCloseTo(1e-12, 26);
  });
});
