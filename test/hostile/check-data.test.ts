/**
 * `check` opens the data: a declared column missing from the file, a number column over text, and
 * a date column over numbers are caught before any run, each naming the data file's line and the
 * recipe line that declared the column; a source with a bad value past the first rows is not read
 * that far (check stays cheap), and a good recipe still says ok.
 */
import { copyFileSync, readFileSync } from 'node:fs';
import { join } from 'node:path';
import { describe, expect, it } from 'vitest';
import { messages } from '../../core/messages.js';
import { expectOutcome, lineColOf, scenario } from './harness.js';

const RECIPE = `dendrolog: 1
name: farms
seed: 1
sources:
  obs:
    file: data/obs.csv
    columns:
      farm_id: FARM_TYPE
      depth_cm: DEPTH_TYPE
      y: number
target: y
predictors: [depth_cm]
models:
  mean: {kind: mean}
evaluation:
  folds: {k: 3}
`;

/** 40 rows: farm F001…, depth as a number, y. */
const DATA = ['farm_id,depth_cm,y', ...Array.from({ length: 40 }, (_, i) => `F${String(i + 1).padStart(3, '0')},${10 + i},${(i * 0.7) % 5}`)].join('\n') + '\n';

/** Where the recipe declares a column's type: the line of `name: type` and the column of the type. */
function typeAt(text: string, declaration: string): string {
  const [line, col] = lineColOf(text, declaration).split(':').map(Number);
  return `${line}:${col + declaration.indexOf(':') + 2}`;
}

const recipeWith = (farm: string, depth: string) => RECIPE.replace('FARM_TYPE', farm).replace('DEPTH_TYPE', depth);

describe('check opens the data', () => {
  it('names a declared column missing from the header, with the line that declares it', async () => {
    const text = recipeWith('string', 'number').replace('      y: number\n', '      y: number\n      rain_mm: number\n');
    const s = scenario({ 'recipe.yaml': text, 'data/obs.csv': DATA });
    const r = await expectOutcome(s.dir, ['check', s.recipe], { code: 1 });
    expect(r.err).toContain('"rain_mm"');
    expect(r.err).toContain(`("rain_mm" is declared at ${s.recipe.replace(process.cwd() + '/', '')}:${typeAt(text, 'rain_mm: number')})`);
  });

  it('names the first value that is not of the declared type, by data line and by recipe line', async () => {
    const text = recipeWith('number', 'number');
    const s = scenario({ 'recipe.yaml': text, 'data/obs.csv': DATA });
    const r = await expectOutcome(s.dir, ['check', s.recipe], { code: 1 });
    // line 2 of the file holds the first data row, F001
    expect(r.err).toContain(':2');
    expect(r.err).toContain('"F001"');
    expect(r.err).toContain(`("farm_id" is declared at ${s.recipe.replace(process.cwd() + '/', '')}:${typeAt(text, 'farm_id: number')})`);
  });

  it('catches a date column over plain numbers', async () => {
    const text = recipeWith('string', 'date');
    const s = scenario({ 'recipe.yaml': text, 'data/obs.csv': DATA });
    const r = await expectOutcome(s.dir, ['check', s.recipe], { code: 1 });
    expect(r.err).toContain('"depth_cm"');
    expect(r.err).toContain(`is declared at ${s.recipe.replace(process.cwd() + '/', '')}:${typeAt(text, 'depth_cm: date')})`);
  });

  it('reads only the first 1,000 rows, and says ok for a sound recipe and data', async () => {
    const rows = ['farm_id,depth_cm,y', ...Array.from({ length: 1200 }, (_, i) => `F${i},${i === 1100 ? 'deep' : i},${i % 7}`)].join('\n') + '\n';
    const s = scenario({ 'recipe.yaml': recipeWith('string', 'number'), 'data/obs.csv': rows });
    const r = await expectOutcome(s.dir, ['check', s.recipe], { code: 0 });
    expect(r.out).toContain(': ok (1 source, the first 1,000 rows of each read with the declared types; 1 models)');
    // the run reads every row and stops at the bad one
    const run = await expectOutcome(s.dir, ['run', s.recipe, '--no-cache', '--workers', '1'], { code: 1 });
    expect(run.err).toContain(':1102');
  });

  it('adds no recipe line to a problem that is not about a declared column', async () => {
    const s = scenario({ 'recipe.yaml': recipeWith('string', 'number'), 'data/obs.csv': 'farm_id,depth_cm,y\n' });
    const r = await expectOutcome(s.dir, ['check', s.recipe], { code: 1 });
    expect(r.err).toContain(messages.sourceNoRows('data/obs.csv'.replace('data', `${s.dir.replace(process.cwd() + '/', '')}/data`), 'the file has a header row but no data rows'));
    expect(r.err).not.toContain('is declared at');
  });
});

describe('check opens a NetCDF source', () => {
  it('names a declared variable the file lacks, with its declaration', async () => {
    const root = join(import.meta.dirname, '..', '..');
    const text = readFileSync(join(root, 'recipes', 'stream-temperature', 'stream-temperature.yaml'), 'utf8')
      .replace('variables: [tas, pr]', 'variables: [tas, pr, rh]')
      .replace('      pr: number                # mm day-1', '      pr: number\n      rh: number');
    const s = scenario({ 'recipe.yaml': text, 'data/samples.csv': readFileSync(join(root, 'recipes', 'stream-temperature', 'data', 'samples.csv'), 'utf8') });
    copyFileSync(join(root, 'recipes', 'stream-temperature', 'data', 'air.nc'), join(s.dir, 'data', 'air.nc'));
    const r = await expectOutcome(s.dir, ['check', s.recipe], { code: 1 });
    expect(r.err).toContain('"rh"');
    expect(r.err).toContain(`("rh" is declared at ${s.recipe.replace(process.cwd() + '/', '')}:${typeAt(text, 'rh: number')})`);
  });
});
