import { describe, expect, it } from 'vitest';
import { messages } from '../../../core/messages.js';
import { parseDelimited } from '../../../steps/readers/csv.js';
import { DelimitedStream, streamDelimitedFile } from '../../../steps/readers/csv-stream.js';
import { readDelimited } from '../../../steps/readers/delimited.js';
import { readRequest } from '../../../steps/source.js';
import { byName, errorOf, fileWith, readSource } from './helpers.js';

/** Records of a text through the streaming parser, fed in chunks of `size` characters. */
function streamed(text: string, size: number, delimiter = ','): { line: number; fields: string[] }[] {
  const out: { line: number; fields: string[] }[] = [];
  const p = new DelimitedStream(delimiter, 'x.csv', (fields, line) => out.push({ line, fields }));
  for (let i = 0; i < text.length; i += size) p.push(text.slice(i, i + size));
  p.end();
  return out;
}

/** The whole-file reader's records, header included, in the same shape. */
function whole(text: string, delimiter = ','): { line: number; fields: string[] }[] {
  const { header, records } = parseDelimited(text, delimiter, 'x.csv');
  // the header is the first line of these texts
  return [{ line: 1, fields: header }, ...records].map((r) => ({ line: r.line, fields: r.fields }));
}

// Quoted delimiters, doubled quotes, newlines inside quotes (LF and CRLF), text after a closing
// quote, an empty last field, blank lines, a byte-order mark and multi-byte characters: the cases
// RFC 4180 (sections 2.5-2.7) and spreadsheets' exports produce.
const TRICKY =
  '\ufeffid,note,value\r\n' +
  '00152,"a, b",1\r\n' +
  '2,"say ""hi""",2\r\n' +
  '3,"two\nlines",3\r\n' +
  '\r\n' +
  '4,"three\r\nlines\r\nhere",4\n' +
  '5,"quoted"tail,5\n' +
  '6,"",\n' +
  '7,"ümlaut ☃ ""x""\n",7\n' +
  '8,"",""';

describe('streaming delimited reader', () => {
  it('agrees with the whole-file reader, records and line numbers, for every chunk size from 1 to 9 characters', () => {
    const expected = whole(TRICKY);
    for (let size = 1; size <= 9; size++) expect(streamed(TRICKY, size)).toEqual(expected);
    expect(streamed(TRICKY, 1 << 20)).toEqual(expected);
  });

  it('agrees on a file read in 1- to 7-byte chunks, with UTF-8 characters cut across chunks', () => {
    const path = fileWith('tricky.csv', TRICKY);
    const expected = whole(TRICKY);
    for (const chunkBytes of [1, 2, 3, 5, 7]) {
      const out: { line: number; fields: string[] }[] = [];
      streamDelimitedFile(path, ',', 'tricky.csv', (fields, line) => out.push({ line, fields }), { chunkBytes });
      expect(out).toEqual(expected);
    }
  });

  it('names the line of a row with the wrong number of fields', async () => {
    const path = fileWith('x.csv', 'a,b\n1,2\n"3\n3",4,5\n');
    for (const chunkBytes of [2, 1 << 20]) {
      const e = await errorOf(() => readDelimited({ ...readRequest({ sha256: '', format: 'csv', columns: { a: 'string' }, missing: [] }, path, 'x.csv'), chunkBytes }));
      expect(e.message).toBe(messages.csvFieldCount('x.csv', 3, 2, 3));
      expect(e.exitCode).toBe(1);
    }
  });

  it('names the line where an unterminated quote starts', async () => {
    const path = fileWith('x.csv', 'a,b\n1,2\n3,"oops\n4,5\n');
    const e = await errorOf(() => readSource(path, { format: 'csv', columns: { a: 'number' } }));
    expect(e.message).toBe(messages.csvUnterminatedQuote(path, 3));
    expect(e.exitCode).toBe(1);
  });

  it('names file, line and column of a value that is not its declared type', async () => {
    const path = fileWith('x.csv', 'a,b\n1,2\n"multi\nline",x\n');
    const e = await errorOf(() => readSource(path, { format: 'csv', columns: { a: 'string', b: 'number' } }));
    expect(e.message).toBe(messages.valueParse(path, 3, 'b', 'x', 'number'));
  });

  it('keeps the ID "00152" as text through a whole source read', async () => {
    const path = fileWith('ids.csv', 'site_id,code,y\n00152,007,1.5\n01000,0,2\n');
    const out = await readSource(path, { format: 'csv', columns: { site_id: 'string', code: 'category', y: 'number' } });
    expect(byName(out)).toEqual({ site_id: ['00152', '01000'], code: ['007', '0'], y: [1.5, 2] });
  });
});

describe('delimited read options', () => {
  it('reads decimal commas with a semicolon delimiter', async () => {
    const path = fileWith('x.csv', 'id;v\nA;3,5\nB;-1,25e2\nC;NA\n');
    const out = await readSource(path, { format: 'csv', columns: { id: 'string', v: 'number' }, delimiter: ';', decimal: ',' });
    expect(byName(out).v).toEqual([3.5, -125, null]);
    const e = await errorOf(() => readSource(path, { format: 'csv', columns: { id: 'string', v: 'number' }, delimiter: ';' }));
    expect(e.message).toBe(messages.valueParse(path, 2, 'v', '3,5', 'number'));
  });

  it('reads a file without a header, columns declared in file order, and counts fields against them', async () => {
    const path = fileWith('x.csv', 'S1,2021-06-03,1\nS2,2021-06-04,2\n');
    const out = await readSource(path, { format: 'csv', columns: { site: 'string', day: 'date', y: 'number' }, header: false });
    expect(byName(out)).toEqual({ site: ['S1', 'S2'], day: [Date.UTC(2021, 5, 3), Date.UTC(2021, 5, 4)], y: [1, 2] });
    const e = await errorOf(() => readSource(path, { format: 'csv', columns: { site: 'string', day: 'date' }, header: false }));
    expect(e.message).toBe(messages.csvFieldCountNoHeader(path, 1, 2, 3));
  });

  it('reads the declared date layouts and rejects days that do not exist', async () => {
    const path = fileWith('x.csv', 'a,b,c\n03/06/2021,06/03/2021,2021-06-03 14:30\n');
    const out = await readSource(path, { format: 'csv', columns: { a: 'date' }, date_format: 'DD/MM/YYYY' });
    expect(byName(out).a).toEqual([Date.UTC(2021, 5, 3)]);
    expect(byName(await readSource(path, { format: 'csv', columns: { b: 'date' }, date_format: 'MM/DD/YYYY' })).b).toEqual([Date.UTC(2021, 5, 3)]);
    expect(byName(await readSource(path, { format: 'csv', columns: { c: 'date' }, date_format: 'YYYY-MM-DD HH:mm' })).c).toEqual([Date.UTC(2021, 5, 3, 14, 30)]);
    const bad = fileWith('y.csv', 'a\n31/02/2021\n');
    const e = await errorOf(() => readSource(bad, { format: 'csv', columns: { a: 'date' }, date_format: 'DD/MM/YYYY' }));
    expect(e.message).toBe(messages.valueParse(bad, 2, 'a', '31/02/2021', 'date (DD/MM/YYYY)'));
  });

  it('ignores undeclared columns by default and lists them, stops on them with undeclared: error, reads them as text with undeclared: text', async () => {
    const path = fileWith('x.csv', 'id,x,note,flag\nA,1,hello,007\n');
    const ignored = await readSource(path, { format: 'csv', columns: { id: 'string', x: 'number' } });
    expect(ignored.frame.columns.map((c) => c.name)).toEqual(['id', 'x']);
    expect((ignored.notes.extra as { undeclared: string[] }).undeclared).toEqual(['note', 'flag']);
    const e = await errorOf(() => readSource(path, { format: 'csv', columns: { id: 'string', x: 'number' }, undeclared: 'error' }));
    expect(e.message).toBe(messages.undeclaredColumns(path, ['note', 'flag']));
    const text = await readSource(path, { format: 'csv', columns: { id: 'string', x: 'number' }, undeclared: 'text' });
    expect(byName(text)).toEqual({ id: ['A'], x: [1], note: ['hello'], flag: ['007'] });
    expect(text.frame.columns.map((c) => c.type)).toEqual(['string', 'number', 'string', 'string']);
  });

  it('reads tab-separated files', async () => {
    const path = fileWith('x.tsv', 'a\tb\n"x\ty"\t2\n');
    expect(byName(await readSource(path, { format: 'tsv', columns: { a: 'string', b: 'number' } }))).toEqual({ a: ['x\ty'], b: [2] });
  });
});
