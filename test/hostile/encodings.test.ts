/**
 * Bad input about bytes and calendars: text that is not what it claims to be (non-UTF-8 bytes,
 * declared encodings, characters split across read chunks), recipes too large or with very many
 * keys, dates that do not exist, a folder where a file belongs, and files with no rows.
 */
import { createHash } from 'node:crypto';
import { readFileSync, writeFileSync } from 'node:fs';
import { join } from 'node:path';
import { describe, expect, it } from 'vitest';
import { messages } from '../../core/messages.js';
import { packageRoot } from '../../runner/paths.js';
import { displayOf } from '../../runner/recipe.js';
import { DelimitedStream } from '../../steps/readers/csv-stream.js';
import { decodeStrict, StrictTextStream } from '../../steps/readers/text-decode.js';
import { SMALL_RECIPE, smallData } from '../helpers.js';
import { cli, expectOutcome, lineColOf, scenario } from './harness.js';

const RUN_FOLDER = 'out/small/';
const TOP_LEVEL_KEYS = Object.keys((JSON.parse(readFileSync(join(packageRoot(), 'schemas', 'recipe.v1.json'), 'utf8')) as { properties: object }).properties);

/** SMALL_RECIPE with an extra declared text column `place`, and optional source options. */
function placeRecipe(sourceOptions = ''): string {
  return SMALL_RECIPE.replace(
    '    columns: {site: string, x1: number, x2: number, y: number}\n',
    `    columns: {site: string, place: category, x1: number, x2: number, y: number}\n${sourceOptions}`,
  );
}

/** smallData with a `place` column alternating between the given values. */
function placeData(places: string[]): string {
  const lines = smallData().trimEnd().split('\n');
  return lines.map((l, i) => (i === 0 ? l.replace('site,', 'site,place,') : l.replace(/^([^,]*),/, `$1,${places[i % places.length]},`))).join('\n') + '\n';
}

/** Runs a recipe and returns its manifest. */
async function runOk(s: { dir: string; recipe: string; cache: string }): Promise<Record<string, unknown>> {
  await expectOutcome(s.dir, ['run', s.recipe, '--cache', s.cache, '--workers', '1'], { code: 0, changes: [RUN_FOLDER] });
  return JSON.parse(readFileSync(join(s.dir, RUN_FOLDER, 'run-record.json'), 'utf8')) as Record<string, unknown>;
}

/** The distinct values of a source column as the manifest profiles them. */
function categoriesOf(manifest: Record<string, unknown>, column: string): string[] {
  const sources = manifest.sources as { columns: { name: string; categories?: { value: string }[] }[] }[];
  const c = sources[0].columns.find((x) => x.name === column);
  return (c?.categories ?? []).map((x) => x.value).sort();
}

const runArgs = (s: { recipe: string; cache: string }) => ['run', s.recipe, '--cache', s.cache, '--workers', '1'];
const dataPath = (s: { dir: string }, name = 'data/obs.csv') => join(s.dir, name);

describe('text sources are decoded strictly', () => {
  it('a Latin-1 byte in an undeclared (UTF-8) CSV stops the run naming file, line and byte offset', async () => {
    const s = scenario({ 'recipe.yaml': placeRecipe() });
    const bytes = Buffer.from(placeData(['café', 'cafè']), 'latin1');
    writeFileSync(dataPath(s), bytes);
    const offset = bytes.findIndex((b) => b >= 0x80);
    const line = bytes.subarray(0, offset).toString('latin1').split('\n').length;
    await expectOutcome(s.dir, runArgs(s), { code: 1, err: messages.textNotDecodable(displayOf(dataPath(s)), line, offset, bytes[offset], 'UTF-8', false) });
  });

  it('a CSV declared latin1 keeps "café" and "cafè" as two categories', async () => {
    const s = scenario({ 'recipe.yaml': placeRecipe('    encoding: latin1\n') });
    writeFileSync(dataPath(s), Buffer.from(placeData(['café', 'cafè']), 'latin1'));
    expect(categoriesOf(await runOk(s), 'place')).toEqual(['café', 'cafè'].sort());
  });

  it('a CSV declared windows-1252 reads its euro sign and curly quotes', async () => {
    const s = scenario({ 'recipe.yaml': placeRecipe('    encoding: windows-1252\n') });
    // 0x80 is the euro sign and 0x93/0x94 curly quotes in windows-1252 (WHATWG index-windows-1252)
    writeFileSync(dataPath(s), Buffer.from(placeData(['\x80', '\x93q\x94']), 'latin1'));
    expect(categoriesOf(await runOk(s), 'place')).toEqual(['\u201cq\u201d', '€'].sort());
  });

  it('a CSV declared utf-16le (with its byte order mark) reads as text', async () => {
    const s = scenario({ 'recipe.yaml': placeRecipe('    encoding: utf-16le\n') });
    writeFileSync(dataPath(s), Buffer.concat([Buffer.from([0xff, 0xfe]), Buffer.from(placeData(['Zürich', '東京']), 'utf16le')]));
    expect(categoriesOf(await runOk(s), 'place')).toEqual(['Zürich', '東京'].sort());
  });

  it('a UTF-16 file read as UTF-8 is named as UTF-16, with the encoding to declare', async () => {
    const s = scenario({ 'recipe.yaml': placeRecipe() });
    writeFileSync(dataPath(s), Buffer.concat([Buffer.from([0xff, 0xfe]), Buffer.from(placeData(['Zürich']), 'utf16le')]));
    await expectOutcome(s.dir, ['run', s.recipe, '--cache', s.cache, '--workers', '1'], {
      code: 1,
      err: messages.textNotDecodable(displayOf(dataPath(s)), 1, 0, 0xff, 'UTF-8', false, 'utf-16le'),
    });
  });

  it('a multi-byte character split across the 1 MiB read boundary is read whole', async () => {
    const s = scenario({ 'recipe.yaml': placeRecipe() });
    // an undeclared column (read, not kept) pads the file so that a 4-byte character (U+1F332)
    // straddles byte 1,048,576, where the first read chunk ends
    const head = placeData(['café', 'cafè'])
      .split('\n')
      .map((l, i) => (l === '' ? l : `${l},${i === 0 ? 'note' : ''}`))
      .join('\n');
    const prefix = 'S0,x,1,2,3,';
    const padLen = (1 << 20) - Buffer.byteLength(head) - Buffer.byteLength(prefix) - 1 - Buffer.byteLength('S0,') - 2;
    const bytes = Buffer.from(`${head}${prefix}${'p'.repeat(padLen)}\nS0,🌲,1,2,3,\n`, 'utf8');
    const at = bytes.indexOf(Buffer.from('🌲'));
    expect(at).toBeLessThan(1 << 20);
    expect(at + 4).toBeGreaterThan(1 << 20);
    writeFileSync(dataPath(s), bytes);
    const places = categoriesOf(await runOk(s), 'place');
    expect(places).toContain('🌲');
    expect(places.join('')).not.toContain('\ufffd');
  });

  it('a bad byte after the first 1 MiB is reported at its own line and byte offset', async () => {
    const s = scenario({ 'recipe.yaml': placeRecipe() });
    const good = placeData(['a', 'b']);
    const rows: string[] = [];
    for (let i = 0, size = Buffer.byteLength(good); size < (1 << 20) + 5000; i++) {
      rows.push(`S${i % 12},b,1,2,${i}\n`);
      size += rows[i].length;
    }
    const bytes = Buffer.concat([Buffer.from(good + rows.join('')), Buffer.from([0x53, 0x31, 0x2c, 0xff, 0x2c, 0x31, 0x2c, 0x32, 0x2c, 0x33, 0x0a])]);
    writeFileSync(dataPath(s), bytes);
    const offset = bytes.length - 8;
    const line = good.split('\n').length + rows.length;
    await expectOutcome(s.dir, runArgs(s), { code: 1, err: messages.textNotDecodable(displayOf(dataPath(s)), line, offset, 0xff, 'UTF-8', false) });
  });

  it('a UTF-8 sequence cut off by the end of the file is reported where it starts', async () => {
    const s = scenario({ 'recipe.yaml': placeRecipe() });
    const text = placeData(['a', 'b']);
    const bytes = Buffer.concat([Buffer.from(text + 'S1,'), Buffer.from([0xe2, 0x82])]);
    writeFileSync(dataPath(s), bytes);
    const line = text.split('\n').length;
    await expectOutcome(s.dir, runArgs(s), { code: 1, err: messages.textNotDecodable(displayOf(dataPath(s)), line, bytes.length - 2, 0xe2, 'UTF-8', false) });
  });

  it('a Latin-1 JSON source fails undeclared and reads declared', async () => {
    const [header, ...rows] = placeData(['café', 'cafè']).trimEnd().split('\n');
    const names = header.split(',');
    const records = JSON.stringify(
      rows.map((r) => Object.fromEntries(r.split(',').map((v, i) => [names[i], i < 2 ? v : Number(v)]))),
      null,
      1,
    );
    const bytes = Buffer.from(records, 'latin1');
    const jsonRecipe = placeRecipe().replace('data/obs.csv', 'data/obs.json');
    const bad = scenario({ 'recipe.yaml': jsonRecipe });
    writeFileSync(dataPath(bad, 'data/obs.json'), bytes);
    const offset = bytes.findIndex((b) => b >= 0x80);
    const line = records.slice(0, offset).split('\n').length;
    await expectOutcome(bad.dir, runArgs(bad), { code: 1, err: messages.textNotDecodable(displayOf(dataPath(bad, 'data/obs.json')), line, offset, bytes[offset], 'UTF-8', false) });

    const good = scenario({ 'recipe.yaml': jsonRecipe.replace('    columns:', '    encoding: latin1\n    columns:') });
    writeFileSync(dataPath(good, 'data/obs.json'), bytes);
    expect(categoriesOf(await runOk(good), 'place')).toEqual(['café', 'cafè'].sort());
  });

  it('predict decodes new data with the source\'s declared encoding', async () => {
    const s = scenario({ 'recipe.yaml': placeRecipe('    encoding: latin1\n') });
    writeFileSync(dataPath(s), Buffer.from(placeData(['café', 'cafè']), 'latin1'));
    await runOk(s);
    writeFileSync(join(s.dir, 'new.csv'), Buffer.from('site,place,x1,x2\nS1,café,1,2\nS2,cafè,2,1\n', 'latin1'));
    const out = join(s.dir, 'pred.csv');
    await expectOutcome(s.dir, ['predict', join(s.dir, RUN_FOLDER), join(s.dir, 'new.csv'), '--out', out], { code: 0, changes: ['pred.csv'] });
    const lines = readFileSync(out, 'utf8').split('\n');
    expect(lines[1].split(',')[1]).toBe('café');
    expect(lines[2].split(',')[1]).toBe('cafè');
  });

  it('an unknown encoding name is refused at its line and column', async () => {
    const recipe = placeRecipe('    encoding: latin-1\n');
    const s = scenario({ 'recipe.yaml': recipe });
    await expectOutcome(s.dir, ['check', s.recipe], { code: 2, err: `${displayOf(s.recipe)}:${lineColOf(recipe, 'latin-1')}: ${messages.unknownEncoding('latin-1', 'latin1')}` });
  });

  it('encoding on a binary format is refused at its key', async () => {
    const recipe = placeRecipe('    encoding: latin1\n').replace('data/obs.csv', 'data/obs.parquet');
    const s = scenario({ 'recipe.yaml': recipe });
    await expectOutcome(s.dir, ['check', s.recipe], { code: 2, err: `${displayOf(s.recipe)}:${lineColOf(recipe, 'latin1')}: ${messages.sourceOptionNotForFormat('encoding', 'parquet', 'csv, tsv and json')}` });
  });
});

describe('the streaming decoder', () => {
  const text = 'a,b\nx,café\n"q\n🌲",€\n';
  const bytes = new Uint8Array(Buffer.from(text));

  it('gives the same records whatever the chunk size', () => {
    const want: string[][] = [];
    new DelimitedStream(',', 't.csv', (f) => want.push(f)).push(text);
    for (let size = 1; size <= 9; size++) {
      const got: string[][] = [];
      const p = new DelimitedStream(',', 't.csv', (f) => got.push(f));
      const d = new StrictTextStream('utf-8', 't.csv');
      for (let i = 0; i < bytes.length; i += size) p.push(d.push(bytes.subarray(i, i + size)));
      p.push(d.end());
      p.end();
      expect(got).toEqual(want);
    }
  });

  it('reports the same line and byte offset whatever the chunk size', () => {
    const bad = new Uint8Array([...bytes.subarray(0, 13), 0xc3, 0x28, ...bytes.subarray(13)]);
    // byte 13 follows the opening quote on line 3; the quoted field's line end is data, but still a line
    const want = messages.textNotDecodable('t.csv', 3, 13, 0xc3, 'UTF-8', false);
    expect(() => decodeStrict(bad, 'utf-8', 't.csv')).toThrow(want);
    for (let size = 1; size <= 9; size++) {
      const d = new StrictTextStream('utf-8', 't.csv');
      expect(() => {
        for (let i = 0; i < bad.length; i += size) d.push(bad.subarray(i, i + size));
        d.end();
      }).toThrow(want);
    }
  });
});

describe('the recipe file is read as bytes', () => {
  it('a non-UTF-8 byte in the recipe is an error at its line and byte offset', async () => {
    const text = SMALL_RECIPE.replace('name: small', 'name: small\ntitle: caf\u00e9');
    const bytes = Buffer.from(text, 'latin1');
    const s = scenario();
    writeFileSync(s.recipe, bytes);
    const offset = bytes.indexOf(0xe9);
    await expectOutcome(s.dir, ['check', s.recipe], { code: 2, err: messages.recipeNotUtf8(displayOf(s.recipe), 3, offset, 0xe9) });
  });

  it('a recipe starting with a UTF-8 byte order mark is accepted, and the manifest hashes its bytes', async () => {
    const s = scenario();
    writeFileSync(s.recipe, Buffer.concat([Buffer.from([0xef, 0xbb, 0xbf]), Buffer.from(SMALL_RECIPE.replace('seed: 3', 'seed: 3\ntitle: Café'))]));
    const r = await cli(['check', s.recipe]);
    expect(r.err).toBe('');
    expect(r.code).toBe(0);
    const manifest = await runOk(s);
    const fileSha = createHash('sha256').update(readFileSync(s.recipe)).digest('hex');
    expect((manifest.recipe as { sha256: string }).sha256).toBe(fileSha);
    expect((manifest.recipe as { normalized: { title: string } }).normalized.title).toBe('Café');
  });

  it('a recipe over 1 MiB is refused before it is parsed', async () => {
    const s = scenario();
    // not even valid YAML after the first line: only the size may be reported
    const big = SMALL_RECIPE + '# ' + 'x'.repeat(1 << 20) + '\n: : [\n';
    writeFileSync(s.recipe, big);
    await expectOutcome(s.dir, ['check', s.recipe], { code: 2, err: messages.recipeTooLarge(displayOf(s.recipe), Buffer.byteLength(big), 1 << 20) });
  });

  /** A recipe just under 1 MiB whose `extra` mapping holds `n` keys, the last one repeating the first. */
  function manyKeys(n: number, repeatFirst: boolean): string {
    const keys: string[] = [];
    for (let i = 0; i < n; i++) keys.push('k' + i.toString(36));
    if (repeatFirst) keys.push(keys[0]);
    return SMALL_RECIPE + `extra: {${keys.join(',')}}\n`;
  }

  it('a recipe with 160,000 keys in one mapping is checked promptly', async () => {
    const s = scenario();
    const text = manyKeys(160_000, false);
    expect(Buffer.byteLength(text)).toBeLessThan(1 << 20);
    writeFileSync(s.recipe, text);
    await expectOutcome(s.dir, ['check', s.recipe], { code: 2, err: `${displayOf(s.recipe)}:${lineColOf(text, 'extra')}: ${messages.unknownKey('extra', 'the recipe', undefined, TOP_LEVEL_KEYS)}` });
  });

  it('a repeated key among 160,000 is found and located', async () => {
    const s = scenario();
    const text = manyKeys(160_000, true);
    writeFileSync(s.recipe, text);
    const repeat = text.lastIndexOf(',k0}') + 1;
    const col = repeat - text.lastIndexOf('\n', repeat);
    const line = text.split('\n').length - 1;
    await expectOutcome(s.dir, ['check', s.recipe], { code: 2, err: `${displayOf(s.recipe)}:${line}:${col}: ${messages.yamlDuplicateKey('k0')}` });
  });
});

describe('calendar overflow is refused with and without a time zone', () => {
  const recipe = SMALL_RECIPE.replace('x2: number, y: number}', 'x2: number, y: number, day: date}');
  const cases: [string, string][] = [
    ['2020-02-30T00:00:00Z', ''],
    ['2020-02-30T00:00:00+02:00', ''],
    ['2020-02-30', ''],
    ['2021-02-29', ''],
    ['2020-13-01', ''],
    ['2020-04-31 10:00', ''],
    ['2020-01-01T24:00:00Z', ''],
    ['2020-04-31 10:00', 'YYYY-MM-DD HH:mm'],
    ['31/04/2020', 'DD/MM/YYYY'],
  ];
  it.each(cases)('%s (date_format %s) is a value error at file:line and column', async (bad, format) => {
    const lines = smallData().trimEnd().split('\n');
    const good = format === 'DD/MM/YYYY' ? '01/03/2020' : format ? '2020-03-01 10:00' : '2020-03-01';
    const data = lines.map((l, i) => `${l},${i === 0 ? 'day' : i === 7 ? bad : good}`).join('\n') + '\n';
    const s = scenario({ 'recipe.yaml': format ? recipe.replace('    columns:', `    date_format: ${format}\n    columns:`) : recipe, 'data/obs.csv': data });
    await expectOutcome(s.dir, runArgs(s), { code: 1, err: messages.valueParse(displayOf(dataPath(s)), 8, 'day', bad, `date (${format || 'YYYY-MM-DD'})`) });
  });

  it('a holdout cutoff on a day that does not exist is refused at its line and column', async () => {
    const text = recipe.replace('groups: site\n', 'time: day\n').replace('evaluation:\n', 'evaluation:\n  holdout: {by: time, cutoff: "2020-02-30T00:00:00Z"}\n');
    const s = scenario({ 'recipe.yaml': text });
    await expectOutcome(s.dir, ['check', s.recipe], {
      code: 2,
      err: `${displayOf(s.recipe)}:${lineColOf(text, '"2020-02-30T00:00:00Z"')}: ${messages.schemaOther('evaluation.holdout.cutoff', '"2020-02-30T00:00:00Z" is not a date; write it as YYYY-MM-DD')}`,
    });
  });

  it('a leap day that exists is still read', async () => {
    const data = smallData().trimEnd().split('\n').map((l, i) => `${l},${i === 0 ? 'day' : '2020-02-29T12:00:00Z'}`).join('\n') + '\n';
    const s = scenario({ 'recipe.yaml': recipe, 'data/obs.csv': data });
    await runOk(s);
  });
});

describe('sources that are not a table', () => {
  it('a folder given as a source file is a recipe error at its file key (check)', async () => {
    const recipe = SMALL_RECIPE.replace('data/obs.csv', 'data');
    const s = scenario({ 'recipe.yaml': recipe });
    await expectOutcome(s.dir, ['check', s.recipe], {
      code: 2,
      err: `${displayOf(s.recipe)}:${lineColOf(recipe, 'data')}: ${messages.sourceNotAFile('data', displayOf(join(s.dir, 'data')), true)}`,
    });
  });

  it('a folder given as a source file is a recipe error at its file key (run)', async () => {
    const recipe = SMALL_RECIPE.replace('data/obs.csv', 'data/tables');
    const s = scenario({ 'recipe.yaml': recipe, 'data/tables/obs.csv': smallData() });
    await expectOutcome(s.dir, runArgs(s), {
      code: 2,
      err: `${displayOf(s.recipe)}:${lineColOf(recipe, 'data/tables')}: ${messages.sourceNotAFile('data/tables', displayOf(join(s.dir, 'data/tables')), true)}`,
    });
  });

  it('a folder given to predict as its data file is a usage error', async () => {
    const s = scenario();
    await runOk(s);
    const out = join(s.dir, 'pred.csv');
    await expectOutcome(s.dir, ['predict', join(s.dir, RUN_FOLDER), join(s.dir, 'data'), '--out', out], { code: 2, err: messages.dataFileNotAFile(join(s.dir, 'data')) });
  });

  it('a CSV with a header row and no data rows has its own message', async () => {
    const s = scenario({ 'data/obs.csv': 'site,x1,x2,y\n' });
    await expectOutcome(s.dir, runArgs(s), { code: 1, err: messages.sourceNoRows(displayOf(dataPath(s)), 'the file has a header row but no data rows') });
  });

  it('an empty JSON array has its own message', async () => {
    const s = scenario({ 'recipe.yaml': SMALL_RECIPE.replace('data/obs.csv', 'data/obs.json'), 'data/obs.json': '[]\n' });
    await expectOutcome(s.dir, runArgs(s), { code: 1, err: messages.sourceNoRows(displayOf(dataPath(s, 'data/obs.json')), 'the file holds an empty array') });
  });
});
