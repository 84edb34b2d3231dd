import { execFileSync } from 'node:child_process';
import { readFileSync } from 'node:fs';
import { join } from 'node:path';
import { expect, it } from 'vitest';
import { messages } from '../../../core/messages.js';
import { timeDecoder } from '../../../steps/readers/cf.js';
import { byName, errorOf, fileWith, readSource , describeNc, ncgen } from './helpers.js';

const FIXTURES = join(import.meta.dirname, '../../fixtures/netcdf');


/** The data section of ncdump's output: each variable's values as printed ("_" for fill values). */
function ncdumpData(text: string): Record<string, string[]> {
  const data = text.slice(text.indexOf('\ndata:') + 6);
  const out: Record<string, string[]> = {};
  for (const m of data.matchAll(/(\w+)\s*=\s*([^;]*);/g)) {
    out[m[1]] = m[2].split(',').map((s) => s.trim().replace(/^"|"$/g, ''));
  }
  return out;
}

/** A numeric attribute from ncdump's header, such as `tas:scale_factor = 0.01 ;` (type suffixes dropped). */
function ncdumpAttr(text: string, variable: string, attr: string): number | undefined {
  const m = new RegExp(`\\b${variable}:${attr} = ([^;]+) ;`).exec(text);
  return m ? Number(m[1].replace(/[a-zA-Z]+$/, '')) : undefined;
}

/** A time as `ncdump -t` prints it ("1990-01-02", "1990-01-02 12", "1970-01-01 00:24:1.500000") in ms, UTC. */
function ncdumpTime(t: string): number {
  const [day, clock = '0'] = t.split(' ');
  const [y, mo, d] = day.split('-').map(Number);
  const [h, mi = 0, sec = 0] = clock.split(':').map(Number);
  return Date.UTC(y, mo - 1, d, h, mi) + Math.round(sec * 1000);
}

const CDL = readFileSync(join(FIXTURES, 'grid.cdl'), 'utf8');
// `ncdump grid-classic.nc` and `ncdump -t -v time grid-classic.nc`, committed (see test/fixtures/netcdf/README.md)
const DUMP = readFileSync(join(FIXTURES, 'grid.ncdump.txt'), 'utf8');
const TIME_DUMP = readFileSync(join(FIXTURES, 'grid.time.ncdump.txt'), 'utf8');

/** The long table the reader should make, built from ncdump's text alone with CF rules applied here. */
function expectedTable(): Record<string, (number | null)[]> {
  const d = ncdumpData(DUMP);
  const times = ncdumpData(TIME_DUMP).time.map(ncdumpTime);
  const lat = d.lat.map(Number);
  const lon = d.lon.map(Number);
  const cf = (name: string) => (raw: string): number | null => {
    // CF 1.11 section 2.5.1: _FillValue and missing_value mark missing data; section 8.1: unpack
    const fill = ncdumpAttr(DUMP, name, '_FillValue');
    const missing = ncdumpAttr(DUMP, name, 'missing_value');
    if (raw === '_') return null;
    const x = Number(raw);
    if (x === fill || x === missing) return null;
    return x * (ncdumpAttr(DUMP, name, 'scale_factor') ?? 1) + (ncdumpAttr(DUMP, name, 'add_offset') ?? 0);
  };
  const out: Record<string, (number | null)[]> = { time: [], lat: [], lon: [], tas: [], pr: [] };
  let k = 0;
  for (const t of times) {
    for (const y of lat) {
      for (const x of lon) {
        out.time.push(t);
        out.lat.push(y);
        out.lon.push(x);
        out.tas.push(cf('tas')(d.tas[k]));
        out.pr.push(cf('pr')(d.pr[k]));
        k++;
      }
    }
  }
  return out;
}

const COLUMNS = { time: 'date', lat: 'number', lon: 'number', tas: 'number', pr: 'number' } as const;

describeNc('NetCDF sources (files written by ncgen, values checked against ncdump)', () => {
  const kinds = ['classic', '64-bit-offset', 'netCDF-4'] as const;

  it.each(kinds)('reads the %s variant into a long table equal to ncdump’s values, unpacked, with fills missing and CF time decoded', async (kind) => {
    const path = ncgen(CDL, kind);
    const out = await readSource(path, { format: 'netcdf', columns: { ...COLUMNS }, variables: ['tas', 'pr'] });
    const got = byName(out);
    const want = expectedTable();
    expect(Object.keys(got)).toEqual(['time', 'lat', 'lon', 'tas', 'pr']);
    expect(got.time).toEqual(want.time);
    expect(got.lat).toEqual(want.lat);
    expect(got.lon).toEqual(want.lon);
    for (const v of ['tas', 'pr']) {
      expect(got[v].length).toBe(want[v].length);
      got[v].forEach((x, i) => (want[v][i] === null ? expect(x).toBeNull() : expect(x).toBeCloseTo(want[v][i] as number, 10)));
    }
    const extra = out.notes.extra as { units: Record<string, string>; tableSha256: string };
    expect(extra.units).toEqual({ lat: 'degrees_north', lon: 'degrees_east', tas: 'K', pr: 'mm day-1' });
    expect(extra.tableSha256).toMatch(/^[0-9a-f]{64}$/);
  });

  it('gives the same table, to the hash, from all three variants', async () => {
    const hashes = new Set<string>();
    for (const kind of kinds) {
      const out = await readSource(ncgen(CDL, kind), { format: 'netcdf', columns: { ...COLUMNS }, variables: ['tas', 'pr'] });
      hashes.add((out.notes.extra as { tableSha256: string }).tableSha256);
    }
    expect(hashes.size).toBe(1);
  });

  it.each(kinds)('keeps only the selected coordinate ranges (%s), the same rows as filtering the whole table', async (kind) => {
    const path = ncgen(CDL, kind);
    const select = { lon: [6.2, null] as [number, null], time: ['1990-01-02', '1990-12-31'] as [string, string] };
    const got = byName(await readSource(path, { format: 'netcdf', columns: { ...COLUMNS }, variables: ['tas', 'pr'], select }));
    const all = byName(await readSource(path, { format: 'netcdf', columns: { ...COLUMNS }, variables: ['tas', 'pr'] }));
    const keep = all.lon.map((x, i) => (x as number) >= 6.2 && (all.time[i] as number) >= Date.UTC(1990, 0, 2));
    for (const c of Object.keys(all)) expect(got[c]).toEqual(all[c].filter((_, i) => keep[i]));
    expect(got.tas.length).toBe(8);
  });

  it('keeps raw time values when the time column is declared as a number', async () => {
    const out = await readSource(ncgen(CDL, 'classic'), { format: 'netcdf', columns: { time: 'number', lat: 'number', lon: 'number', pr: 'number' }, variables: ['pr'] });
    expect([...new Set(byName(out).time)]).toEqual(ncdumpData(DUMP).time.map(Number));
  });

  it('decodes hours, minutes and seconds since a reference time as ncdump -t does', async () => {
    const units = ['hours since 1990-01-01 06:00:00', 'minutes since 2000-02-28', 'seconds since 1970-01-01T00:00:00Z', 'days since 1582-10-15'];
    for (const [i, u] of units.entries()) {
      const cdl = `netcdf t { dimensions: time = 4 ; variables: double time(time) ; time:units = "${u}" ; time:calendar = "${i === 3 ? 'proleptic_gregorian' : 'gregorian'}" ; float x(time) ; data: time = 0, 18, 1441.5, 86400 ; x = 1, 2, 3, 4 ; }`;
      const path = ncgen(cdl, 'classic', `t${i}`);
      const printed = ncdumpData(execFileSync('ncdump', ['-t', '-v', 'time', path], { encoding: 'utf8' })).time;
      const want = printed.map(ncdumpTime);
      const got = byName(await readSource(path, { format: 'netcdf', columns: { time: 'date', x: 'number' }, variables: ['x'] })).time;
      expect(got).toEqual(want);
    }
  });
});

describeNc('NetCDF bad input', () => {
  it('lists the variables the file has when a variable is unknown', async () => {
    const path = ncgen(CDL, 'netCDF-4');
    const e = await errorOf(() => readSource(path, { format: 'netcdf', columns: { ...COLUMNS, tass: 'number' }, variables: ['tass'] }));
    expect(e.message).toBe(messages.netcdfUnknownVariable(path, 'tass', ['time', 'lat', 'lon', 'tas', 'pr', 'station_count'], 'tas'));
    expect(e.exitCode).toBe(1);
  });

  it('says which CF time unit cannot be decoded, and which calendar is not supported', async () => {
    const units = 'months since 1990-01-01';
    const monthly = ncgen(CDL.replace('days since 1990-01-01', units), 'classic');
    const e = await errorOf(() => readSource(monthly, { format: 'netcdf', columns: { ...COLUMNS }, variables: ['tas', 'pr'] }));
    const why = timeDecoder(units, 'standard');
    expect(why.ok).toBe(false);
    expect(e.message).toBe(messages.netcdfTimeUnits(monthly, 'time', units, (why as { why: string }).why));
    expect(e.message).toContain('"months"');
    const noleap = ncgen(CDL.replace('"standard"', '"noleap"'), 'netCDF-4');
    const e2 = await errorOf(() => readSource(noleap, { format: 'netcdf', columns: { ...COLUMNS }, variables: ['tas', 'pr'] }));
    expect(e2.message).toBe(messages.netcdfCalendar(noleap, 'time', 'noleap'));
  });

  it('says a file is not NetCDF, and says a truncated file is truncated, without a stack trace', async () => {
    const text = fileWith('notes.nc', 'hello world, this is text');
    const e = await errorOf(() => readSource(text, { format: 'netcdf', columns: { x: 'number' }, variables: ['x'] }));
    expect(e.message).toBe(messages.netcdfNotNetcdf(text, JSON.stringify('hello wo')));
    const [before, after] = messages.netcdfTruncated('FILE', '\u0000').split('\u0000');
    for (const [kind, keep] of [['classic', 900], ['classic', 100], ['netCDF-4', 4000], ['netCDF-4', 600]] as const) {
      const whole = readFileSync(ncgen(CDL, kind));
      const cut = fileWith(`cut-${kind}.nc`, whole.subarray(0, keep));
      const err = await errorOf(() => readSource(cut, { format: 'netcdf', columns: { ...COLUMNS }, variables: ['tas', 'pr'] }));
      expect(err.message.startsWith(before.replace('FILE', cut))).toBe(true);
      expect(err.message.endsWith(after)).toBe(true);
      expect(err.message).not.toMatch(/\n\s+at /);
      expect(err.exitCode).toBe(1);
    }
  });

  it('asks for an undeclared dimension to be declared', async () => {
    const path = ncgen(CDL, 'classic');
    const e = await errorOf(() => readSource(path, { format: 'netcdf', columns: { time: 'date', lat: 'number', tas: 'number' }, variables: ['tas'] }));
    expect(e.message).toBe(messages.netcdfUndeclaredDimension(path, 'tas', 'lon'));
  });
});
