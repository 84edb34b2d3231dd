import { describe, expect, it } from 'vitest';
import { formatNumber } from '../../runner/format.js';

describe('formatNumber', () => {
  it('keeps ordinary values short and fixed', () => {
    expect(formatNumber(0.123456)).toBe('0.123');
    expect(formatNumber(1234.56)).toBe('1234.6');
    expect(formatNumber(-0.0004)).toBe('−0.000400');
  });

  it('writes values from a billion on with an exponent and four significant digits', () => {
    expect(formatNumber(6.125008105496678e300)).toBe('6.125e+300');
    expect(formatNumber(-2.5e9)).toBe('−2.500e+9');
  });

  it('never writes NaN or a missing value as a number', () => {
    expect(formatNumber(Number.NaN)).toBe('—');
    expect(formatNumber(null)).toBe('—');
  });
});
