/**
 * The one number formatter. Expected texts follow common typographic practice for technical
 * reports (SI brochure, 9th edition, §5.4.4: digits grouped in threes with a thin space, the true
 * minus sign U+2212); significant-digit rounding as Intl.NumberFormat (ECMA-402) defines it.
 */
import { describe, expect, it } from 'vitest';
import { formatCount, formatFixed, formatMetric, formatNumber, formatPercent, formatValue } from '../../runner/format.js';

const T = '\u2009';
const M = '\u2212';

describe('the number formatter', () => {
  it.each([
    // [value, score (formatNumber), data value (formatValue)]
    [0.123456, '0.123', '0.1235'],
    [0.28, '0.280', '0.28'],
    [0.0093712, '0.00937', '0.009371'],
    [-0.0004, `${M}0.000400`, `${M}0.0004`],
    [29.38312, '29.4', '29.38'],
    [220, '220', '220'],
    [1234.56, `1${T}235`, `1${T}235`],
    [-9999, `${M}9${T}999`, `${M}9${T}999`],
    [5354, `5${T}354`, `5${T}354`],
    [123456.7, `123${T}457`, `123${T}457`],
    [6.125008105496678e300, '6.125e+300', '6.125e+300'],
    [-2.5e9, `${M}2.500e+9`, `${M}2.500e+9`],
    [5e-15, '0.00', '0'],
    [-1e-12, '0.00', '0'],
    [0, '0.00', '0'],
    [Number.POSITIVE_INFINITY, '∞', '∞'],
    [Number.NEGATIVE_INFINITY, `${M}∞`, `${M}∞`],
    [Number.NaN, '—', '—'],
    [null, '—', '—'],
  ] as const)('writes %s as the score %s and the data value %s', (v, score, value) => {
    expect(formatNumber(v)).toBe(score);
    expect(formatValue(v)).toBe(value);
  });

  it('rounds a small negative value to zero without a sign', () => {
    expect(formatFixed(-0.04, 1)).toBe('0.0');
    expect(formatNumber(-0.0000001)).toBe(`${M}0.000000100`);
  });

  it('writes counts, shares and fixed decimals in the same style', () => {
    expect(formatCount(2822)).toBe(`2${T}822`);
    expect(formatCount(1000000)).toBe(`1${T}000${T}000`);
    expect(formatCount(999)).toBe('999');
    expect(formatPercent(0.8)).toBe('80.0%');
    expect(formatPercent(0.875)).toBe('87.5%');
    expect(formatPercent(1)).toBe('100.0%');
    expect(formatFixed(-0.6, 1)).toBe(`${M}0.6`);
    expect(formatFixed(12.345, 1)).toBe('12.3');
  });
});

describe('model scores', () => {
  it('write R² with three decimals and the error metrics with three significant digits', () => {
    expect(formatMetric('r2', 0.99951)).toBe('1.000');
    expect(formatMetric('r2', 0.8092)).toBe('0.809');
    expect(formatMetric('r2', -7.25)).toBe('\u22127.250');
    expect(formatMetric('r2', -1e-12)).toBe('0.000');
    expect(formatMetric('rmse', 0.09031)).toBe('0.0903');
    expect(formatMetric('rmse', 29.383)).toBe('29.4');
    expect(formatMetric('r2', null)).toBe('—');
  });
});
