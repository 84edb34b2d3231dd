/** The headline's score ladder: every model's holdout R² on one scale, chosen first, intervals as bars. */
import { describe, expect, it } from 'vitest';
import { scoreLadder } from '../../runner/score-ladder.js';

describe('the score ladder', () => {
  it('puts the chosen model first and places values and intervals on a scale from a round value at or below 0 to 1', () => {
    const l = scoreLadder([
      { name: 'mean', role: 'baseline', value: -0.02, low: -0.55, high: 0.25 },
      { name: 'forest', role: 'chosen', value: 0.8, low: 0.7, high: 0.9 },
    ]);
    expect(l.rungs.map((r) => r.name)).toEqual(['forest', 'mean']);
    // −0.55 rounds down to −0.6 in steps of a fifth; the scale is 1.6 wide
    expect(l.domain).toBe('−0.6 to 1.0');
    expect(l.rungs[0]).toMatchObject({ chosen: true, value: '0.800', dot: (((0.8 + 0.6) / 1.6) * 100).toFixed(2), below: false });
    expect(l.rungs[0].span).toEqual({ left: (((0.7 + 0.6) / 1.6) * 100).toFixed(2), width: ((0.2 / 1.6) * 100).toFixed(2) });
    // ticks at round multiples of the step, 0 and 1 among them
    expect(l.ticks.map((t) => t.label)).toEqual(['−0.5', '0.0', '0.5', '1.0']);
    expect(l.ticks.find((t) => t.label === '0.0')!.left).toBe(((0.6 / 1.6) * 100).toFixed(2));
  });

  it('keeps a scale of good models from 0, in tenths or fifths', () => {
    const l = scoreLadder([{ name: 'a', role: 'chosen', value: 0.95, low: 0.9, high: 0.97 }]);
    expect(l.domain).toBe('0.0 to 1.0');
    expect(l.ticks.map((t) => t.label)).toEqual(['0.0', '0.2', '0.4', '0.6', '0.8', '1.0']);
  });

  it('shows a value below −1 at the edge with an arrow and its number, and an undefined value in words without a dot', () => {
    const l = scoreLadder([
      { name: 'a', role: 'chosen', value: 0.5, low: 0.4, high: 0.6 },
      { name: 'bad', role: '', value: -7.25, low: -9, high: -5 },
      { name: 'flat', role: 'baseline', value: null, reason: 'the holdout target is constant', low: null, high: null },
    ]);
    expect(l.domain).toBe('−1.0 to 1.0');
    expect(l.rungs[1]).toMatchObject({ value: '−7.250', dot: '0.00', below: true, span: { left: '0.00', width: '0.00' } });
    expect(l.rungs[2]).toMatchObject({ value: 'undefined (the holdout target is constant)', dot: null, span: null, below: false });
  });
});
