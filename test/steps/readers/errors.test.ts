import { readFileSync } from 'node:fs';
import { join } from 'node:path';
import { tableFromIPC } from '@uwdata/flechette';
import { asyncBufferFromFile, parquetMetadataAsync, parquetRead } from 'hyparquet';
import { describe, expect, it } from 'vitest';
import { messages } from '../../../core/messages.js';
import { errorOf, fileWith, readSource , describeNc, ncgen, NCGEN_INSTALLED } from './helpers.js';
import { writeParquet } from './writers.js';

const FIXTURES = join(import.meta.dirname, '../../fixtures/netcdf');


/** The message of the error a call throws (sync or async), whatever its class: a library's own complaint. */
async function complaint(f: () => unknown): Promise<string> {
  try {
    await f();
  } catch (e) {
    return (e as Error).message;
  }
  throw new Error('expected the library to refuse the input');
}

const CDL = NCGEN_INSTALLED ? readFileSync(join(FIXTURES, 'grid.cdl'), 'utf8') : '';
// time × lat × lon in test/fixtures/netcdf/grid.cdl; station_count runs over lat × lon only
const COLUMNS = { time: 'date', lat: 'number', lon: 'number', tas: 'number', pr: 'number' } as const;
const DIMS = ['time', 'lat', 'lon'];

describe('JSON sources of the wrong shape', () => {
  it('says a file is not JSON, in the parser’s words', async () => {
    const text = '{"a": [1, 2';
    const path = fileWith('broken.json', text);
    const e = await errorOf(() => readSource(path, { format: 'json', columns: { a: 'number' } }));
    expect([e.message, e.exitCode]).toEqual([messages.sourceUnreadable(path, 'JSON', await complaint(() => JSON.parse(text))), 1]);
  });

  it('names an array element that is not a record', async () => {
    const path = fileWith('rows.json', '[{"a": 1}, 2]');
    const e = await errorOf(() => readSource(path, { format: 'json', columns: { a: 'number' } }));
    expect([e.message, e.exitCode]).toEqual([messages.jsonShape(path, 'element 2 of the array is 2, not a record'), 1]);
  });

  it('names a column that is not an array, and columns of unequal length', async () => {
    const scalar = fileWith('cols.json', '{"a": 1}');
    const e = await errorOf(() => readSource(scalar, { format: 'json', columns: { a: 'number' } }));
    expect([e.message, e.exitCode]).toEqual([messages.jsonShape(scalar, '"a" is not an array'), 1]);
    const ragged = fileWith('ragged.json', '{"a": [1, 2], "b": [1]}');
    const r = await errorOf(() => readSource(ragged, { format: 'json', columns: { a: 'number', b: 'number' } }));
    expect([r.message, r.exitCode]).toEqual([messages.jsonShape(ragged, 'column "b" has 1 values, but the columns before it have 2'), 1]);
  });

  it('says what the file holds when it is neither an array nor an object', async () => {
    const path = fileWith('n.json', '42');
    const e = await errorOf(() => readSource(path, { format: 'json', columns: { a: 'number' } }));
    expect([e.message, e.exitCode]).toEqual([messages.jsonShape(path, 'the file holds 42'), 1]);
  });
});

describe('binary sources that cannot be read', () => {
  it('says a file is not Arrow IPC, with flechette’s complaint', async () => {
    const text = 'not arrow at all';
    const path = fileWith('x.arrow', text);
    const e = await errorOf(() => readSource(path, { format: 'arrow', columns: { x: 'number' } }));
    const detail = await complaint(() => tableFromIPC(readFileSync(path), { useDate: true }));
    expect([e.message, e.exitCode]).toEqual([messages.sourceUnreadable(path, 'Arrow IPC', detail), 1]);
  });

  it('says a file is not Parquet, with hyparquet’s complaint about its footer', async () => {
    const path = fileWith('x.parquet', 'not parquet at all');
    const e = await errorOf(() => readSource(path, { format: 'parquet', columns: { x: 'number' } }));
    const detail = await complaint(async () => parquetMetadataAsync(await asyncBufferFromFile(path)));
    expect([e.message, e.exitCode]).toEqual([messages.sourceUnreadable(path, 'Parquet', detail), 1]);
  });

  it('says a Parquet file whose footer reads but whose data page is damaged cannot be read', async () => {
    const whole = fileWith('whole.parquet', '');
    writeParquet(whole, { rows: 4, columns: [{ name: 'x', type: 'number', values: Float64Array.from([1, 2, 3, 4]) }] });
    const bytes = readFileSync(whole);
    // the first data page header starts right after the leading "PAR1"
    bytes[4] = 0xff;
    const path = fileWith('damaged.parquet', bytes);
    const e = await errorOf(() => readSource(path, { format: 'parquet', columns: { x: 'number' } }));
    const file = await asyncBufferFromFile(path);
    const metadata = await parquetMetadataAsync(file);
    const detail = await complaint(() => parquetRead({ file, metadata, columns: ['x'], onChunk: () => {} }));
    expect([e.message, e.exitCode]).toEqual([messages.sourceUnreadable(path, 'Parquet', detail), 1]);
  });
});

describeNc('NetCDF sources the reader refuses (files written by ncgen)', () => {
  it('says the CDF-5 variant is not read, and how to convert it', async () => {
    const path = ncgen(CDL, 'cdf5');
    const e = await errorOf(() => readSource(path, { format: 'netcdf', columns: { ...COLUMNS }, variables: ['tas', 'pr'] }));
    expect([e.message, e.exitCode]).toEqual([
      messages.sourceUnreadable(path, 'NetCDF', 'it is the CDF-5 variant, which dendrolog does not read; convert it with "nccopy -k netCDF-4 in.nc out.nc"'),
      1,
    ]);
  });

  it('refuses a text variable, as char in a classic file and as string in NetCDF-4', async () => {
    const cdl = (decl: string, data: string) =>
      `netcdf t { dimensions: x = 2 ; n = 3 ; variables: float x(x) ; ${decl} ; float v(x) ; data: x = 1, 2 ; ${data} ; v = 1, 2 ; }`;
    const classic = ncgen(cdl('char name(x, n)', 'name = "ab", "cd"'), 'classic', 'chars');
    const c = await errorOf(() => readSource(classic, { format: 'netcdf', columns: { x: 'number', n: 'number', name: 'number' }, variables: ['name'] }));
    expect([c.message, c.exitCode]).toEqual([messages.netcdfNotNumeric(classic, 'name', 'char'), 1]);
    const nc4 = ncgen(cdl('string name(x)', 'name = "ab", "cd"'), 'netCDF-4', 'strings');
    const s = await errorOf(() => readSource(nc4, { format: 'netcdf', columns: { x: 'number', name: 'number' }, variables: ['name'] }));
    expect([s.message, s.exitCode]).toEqual([messages.netcdfNotNumeric(nc4, 'name', 'string'), 1]);
  });

  it('refuses variables over different dimensions in one source', async () => {
    const path = ncgen(CDL, 'netCDF-4');
    const e = await errorOf(() =>
      readSource(path, { format: 'netcdf', columns: { ...COLUMNS, station_count: 'number' }, variables: ['tas', 'station_count'] }),
    );
    expect([e.message, e.exitCode]).toEqual([messages.netcdfDimensionsDiffer(path, 'tas', DIMS, 'station_count', ['lat', 'lon']), 1]);
  });

  it('refuses a declared column that is neither a dimension nor a variable read', async () => {
    const path = ncgen(CDL, 'classic');
    const e = await errorOf(() => readSource(path, { format: 'netcdf', columns: { ...COLUMNS }, variables: ['tas'] }));
    expect([e.message, e.exitCode]).toEqual([messages.netcdfDeclaredNotRead(path, 'pr', DIMS, ['tas']), 1]);
  });

  it('refuses a dimension declared as text', async () => {
    const path = ncgen(CDL, 'classic');
    const e = await errorOf(() => readSource(path, { format: 'netcdf', columns: { ...COLUMNS, lat: 'string' }, variables: ['tas', 'pr'] }));
    expect([e.message, e.exitCode]).toEqual([messages.netcdfDimensionValues(path, 'lat', 'string'), 1]);
  });

  it('refuses a variable declared as a category with the same message', async () => {
    const path = ncgen(CDL, 'classic');
    const e = await errorOf(() => readSource(path, { format: 'netcdf', columns: { ...COLUMNS, pr: 'category' }, variables: ['tas', 'pr'] }));
    expect([e.message, e.exitCode]).toEqual([messages.netcdfDimensionValues(path, 'pr', 'category'), 1]);
  });

  it('refuses a select on a column that is not a dimension (exit 2: the recipe is at fault)', async () => {
    const path = ncgen(CDL, '64-bit-offset');
    const e = await errorOf(() => readSource(path, { format: 'netcdf', columns: { ...COLUMNS }, variables: ['tas', 'pr'], select: { pr: [0, 1] } }));
    expect([e.message, e.exitCode]).toEqual([messages.netcdfSelectUnknown(path, 'pr', DIMS), 2]);
  });
});
