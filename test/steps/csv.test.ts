import { describe, expect, it } from 'vitest';
import { DendrologError, messages } from '../../core/messages.js';
import { parseDelimited } from '../../steps/readers/csv.js';
import { parseValue } from '../../steps/readers/values.js';

const errorOf = (f: () => unknown): DendrologError => {
  try {
    f();
  } catch (e) {
    return e as DendrologError;
  }
  throw new Error('expected an error');
};

describe('delimited text (RFC 4180 quoting)', () => {
  it('reads quoted fields with delimiters, doubled quotes and newlines, and keeps line numbers', () => {
    const text = 'id,note\n1,"a, b"\n2,"say ""hi"""\n3,"two\nlines"\n4,plain\n';
    const { header, records } = parseDelimited(text, ',', 'x.csv');
    expect(header).toEqual(['id', 'note']);
    expect(records.map((r) => r.fields)).toEqual([
      ['1', 'a, b'],
      ['2', 'say "hi"'],
      ['3', 'two\nlines'],
      ['4', 'plain'],
    ]);
    expect(records.map((r) => r.line)).toEqual([2, 3, 4, 6]);
  });

  it('handles CRLF, a byte-order mark, tabs and a missing final newline', () => {
    const { header, records } = parseDelimited('\ufeffa\tb\r\n1\t2\r\n3\t4', '\t', 'x.tsv');
    expect(header).toEqual(['a', 'b']);
    expect(records.map((r) => r.fields)).toEqual([
      ['1', '2'],
      ['3', '4'],
    ]);
  });

  it('names the line of a row with the wrong number of fields', () => {
    const e = errorOf(() => parseDelimited('a,b\n1,2\n3,4,5\n', ',', 'x.csv'));
    expect(e.message).toBe(messages.csvFieldCount('x.csv', 3, 2, 3));
    expect(e.exitCode).toBe(1);
  });

  it('names the line where an unterminated quote starts', () => {
    const e = errorOf(() => parseDelimited('a,b\n1,2\n3,"oops\n4,5\n', ',', 'x.csv'));
    expect(e.message).toBe(messages.csvUnterminatedQuote('x.csv', 3));
  });

  it('refuses an empty file and a repeated header name', () => {
    expect(errorOf(() => parseDelimited('', ',', 'x.csv')).message).toBe(messages.csvEmpty('x.csv'));
    expect(errorOf(() => parseDelimited('a,a\n1,2\n', ',', 'x.csv')).message).toBe(messages.csvDuplicateHeader('x.csv', 'a'));
  });
});

describe('typed values', () => {
  const none = new Set<string>();
  it('keeps codes with leading zeros as text', () => {
    expect(parseValue('00152', 'string', none)).toBe('00152');
    expect(parseValue('00152', 'category', none)).toBe('00152');
  });
  it('parses numbers strictly', () => {
    expect(parseValue(' 3.5 ', 'number', none)).toBe(3.5);
    expect(parseValue('-1e3', 'number', none)).toBe(-1000);
    expect(parseValue('3,5', 'number', none)).toBeUndefined();
    expect(parseValue('12abc', 'number', none)).toBeUndefined();
  });
  it('matches numeric missing tokens by value', () => {
    const missing = new Set(['-9999']);
    expect(parseValue('-9999', 'number', missing)).toBeNull();
    expect(parseValue('-9999.0', 'number', missing)).toBeNull();
  });
  it('parses ISO dates as UTC and rejects impossible ones', () => {
    expect(parseValue('2021-06-03', 'date', none)).toBe(Date.UTC(2021, 5, 3));
    expect(parseValue('2021-02-30', 'date', none)).toBeUndefined();
    expect(parseValue('03/06/2021', 'date', none)).toBeUndefined();
  });
});
