import { describe, expect, it } from 'vitest';
import { encodeFrame } from '../../../core/frame.js';
import { sha256 } from '../../../core/hash.js';
import { messages } from '../../../core/messages.js';
import { tableSha256 } from '../../../steps/readers/table-hash.js';
import { byName, errorOf, fileWith, readSource } from './helpers.js';
import { writeArrow, writeParquet } from './writers.js';

// One table, first as CSV; the Parquet and Arrow files are written from what the CSV read gave,
// by hyparquet-writer and by flechette, and must read back equal to it (to the table's hash).
const CSV = 'site_id,sampled_on,temp_c,land,note\n00152,2021-06-03,12.5,forest,a\n01000,2021-06-04,NA,wetland,b\n00007,2021-07-01,-3,forest,\n10000,2021-07-02,0.25,urban,d\n00152,2021-08-15,1e3,forest,e\n';
const COLUMNS = { site_id: 'string', sampled_on: 'date', temp_c: 'number', land: 'category' } as const;

async function fromCsv() {
  return readSource(fileWith('table.csv', CSV), { format: 'csv', columns: { ...COLUMNS } });
}
const hashOf = (o: { notes: { extra?: unknown } }) => (o.notes.extra as { tableSha256: string }).tableSha256;

describe('Parquet, Arrow and JSON sources', () => {
  it('read a Parquet file written by hyparquet-writer equal to the CSV it came from', async () => {
    const csv = await fromCsv();
    const path = fileWith('table.parquet', '');
    writeParquet(path, csv.frame);
    const pq = await readSource(path, { format: 'parquet', columns: { ...COLUMNS } });
    expect(byName(pq)).toEqual(byName(csv));
    expect(byName(pq).site_id).toEqual(['00152', '01000', '00007', '10000', '00152']);
    expect(hashOf(pq)).toBe(hashOf(csv));
  });

  it.each(['file', 'stream'] as const)('read an Arrow IPC %s written by flechette equal to the CSV it came from', async (format) => {
    const csv = await fromCsv();
    const path = fileWith(`table.${format === 'file' ? 'arrow' : 'arrows'}`, '');
    writeArrow(path, csv.frame, format);
    const arrow = await readSource(path, { format: 'arrow', columns: { ...COLUMNS } });
    expect(byName(arrow)).toEqual(byName(csv));
    expect(hashOf(arrow)).toBe(hashOf(csv));
  });

  it('read JSON as an array of records and as an object of columns, equal to the CSV', async () => {
    const csv = await fromCsv();
    const plain = byName(csv);
    const asText = (name: string, v: number | string | null) => (name === 'sampled_on' && typeof v === 'number' ? new Date(v).toISOString().slice(0, 10) : v);
    const records = plain.site_id.map((_, i) => Object.fromEntries(Object.keys(plain).map((k) => [k, asText(k, plain[k][i])])));
    const columns = Object.fromEntries(Object.keys(plain).map((k) => [k, plain[k].map((v) => asText(k, v))]));
    for (const doc of [records, columns]) {
      const out = await readSource(fileWith('t.json', JSON.stringify(doc)), { format: 'json', columns: { ...COLUMNS } });
      expect(byName(out)).toEqual(plain);
      expect(hashOf(out)).toBe(hashOf(csv));
    }
  });

  it('name a declared column missing from a Parquet, Arrow or JSON file', async () => {
    const csv = await fromCsv();
    const pq = fileWith('t.parquet', '');
    writeParquet(pq, csv.frame);
    const arrow = fileWith('t.arrow', '');
    writeArrow(arrow, csv.frame, 'file');
    const json = fileWith('t.json', JSON.stringify([{ site_id: '1', sampled_on: '2021-01-01', temp_c: 1, land: 'x' }]));
    const available = ['site_id', 'sampled_on', 'temp_c', 'land'];
    for (const [path, format] of [[pq, 'parquet'], [arrow, 'arrow'], [json, 'json']] as const) {
      const e = await errorOf(() => readSource(path, { format, columns: { ...COLUMNS, temp: 'number' } }));
      expect(e.message).toBe(messages.declaredColumnMissing(path, 'temp', available, 'temp_c'));
      expect(e.exitCode).toBe(1);
    }
  });

  it('name file, row and column of a value that is not its declared type', async () => {
    const json = fileWith('t.json', JSON.stringify([{ a: 1 }, { a: 'x' }]));
    const e = await errorOf(() => readSource(json, { format: 'json', columns: { a: 'number' } }));
    expect(e.message).toBe(messages.valueParseAt(json, 'record 2', 'a', 'x', 'number'));
    const csv = await fromCsv();
    const pq = fileWith('t.parquet', '');
    writeParquet(pq, csv.frame);
    const e2 = await errorOf(() => readSource(pq, { format: 'parquet', columns: { land: 'date' } }));
    expect(e2.message).toBe(messages.valueParseAt(pq, 'row 1', 'land', 'forest', 'date (YYYY-MM-DD)'));
  });

  it('say a file is not Parquet or Arrow, naming it', async () => {
    const path = fileWith('t.parquet', 'not a parquet file at all');
    const e = await errorOf(() => readSource(path, { format: 'parquet', columns: { a: 'number' } }));
    expect(e.message.startsWith(`${path}: could not be read as Parquet`)).toBe(true);
    const e2 = await errorOf(() => readSource(path, { format: 'arrow', columns: { a: 'number' } }));
    expect(e2.message.startsWith(`${path}: could not be read as Arrow IPC`)).toBe(true);
  });
});

describe('table hash', () => {
  it('equals the SHA-256 of encodeFrame’s bytes, for text, number and date columns and none', async () => {
    const csv = await fromCsv();
    expect(tableSha256(csv.frame)).toBe(sha256(encodeFrame(csv.frame)));
    const empty = { rows: 0, columns: [] };
    expect(tableSha256(empty)).toBe(sha256(encodeFrame(empty)));
    const long = { rows: 20000, columns: [{ name: 'ü"x', type: 'string' as const, values: Array.from({ length: 20000 }, (_, i) => (i % 7 ? `v${i}\n"` : null)) }] };
    expect(tableSha256(long)).toBe(sha256(encodeFrame(long)));
  });
});
