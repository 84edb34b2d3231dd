import { join } from 'node:path';
import { describe, expect, it } from 'vitest';
import { messages, RecipeErrors } from '../../../core/messages.js';
import { formatOf, normalizeSource } from '../../../runner/normalize.js';
import { planRecipe } from '../../../runner/plan.js';
import { loadRecipe } from '../../../runner/recipe.js';
import { makeFolder, SMALL_RECIPE, smallData } from '../../helpers.js';

function problemsOf(recipeText: string, files: Record<string, string> = {}): string[] {
  const dir = makeFolder({ 'recipe.yaml': recipeText, 'data/obs.csv': smallData(), ...files });
  try {
    loadRecipe(join(dir, 'recipe.yaml'));
  } catch (e) {
    if (e instanceof RecipeErrors) return e.problems.map((p) => p.replace(/^.*?recipe\.yaml:\d+:\d+: /, ''));
    throw e;
  }
  return [];
}

const withSource = (extra: string) => SMALL_RECIPE.replace('    columns: {site: string, x1: number, x2: number, y: number}\n', `    columns: {site: string, x1: number, x2: number, y: number}\n${extra}`);
const GRID = `  grid:
    file: data/grid.nc
    columns: {time: date, lat: number, tas: number}
`;

describe('source options in the recipe', () => {
  it('take their format from the extension, and their defaults from the format', () => {
    expect(['a.csv', 'b.TSV', 'c.json', 'd.parquet', 'e.feather', 'f.arrows', 'g.nc', 'h.txt'].map(formatOf)).toEqual(['csv', 'tsv', 'json', 'parquet', 'arrow', 'arrow', 'netcdf', 'csv']);
    expect(normalizeSource({ file: 'a.tsv', columns: { x: 'number' } })).toEqual({
      file: 'a.tsv', format: 'tsv', sha256: null, columns: { x: 'number' }, missing: ['', 'NA'], undeclared: 'ignore', date_format: 'YYYY-MM-DD', encoding: 'utf-8', delimiter: '\t', decimal: '.', header: true,
    });
    expect(normalizeSource({ file: 'g.nc', columns: { x: 'number' }, variables: ['x'] })).toEqual({
      file: 'g.nc', format: 'netcdf', sha256: null, columns: { x: 'number' }, missing: ['', 'NA'], undeclared: 'ignore', date_format: 'YYYY-MM-DD', variables: ['x'], select: {},
    });
  });

  it('refuse options of another format, and a decimal comma with a comma delimiter', () => {
    expect(problemsOf(withSource('    variables: [y]\n'))).toEqual([messages.sourceOptionNotForFormat('variables', 'csv', 'netcdf')]);
    expect(problemsOf(withSource('    decimal: ","\n'))[0]).toBe(messages.schemaOther('sources.obs.decimal', 'a decimal comma needs another delimiter; set delimiter: ";" (or a tab)'));
    expect(problemsOf(withSource('    delimiter: ";"\n    decimal: ","\n'))).toEqual([]);
  });

  it('ask a NetCDF source for its variables, declared, and for select bounds of the right kind', () => {
    const recipe = (extra: string) => SMALL_RECIPE.replace('target: y', `${GRID}${extra}target: y`);
    expect(problemsOf(recipe(''))).toEqual([messages.netcdfVariablesNeeded()]);
    expect(problemsOf(recipe('    variables: [pr]\n'))).toEqual([messages.netcdfVariableNotDeclared('pr')]);
    expect(problemsOf(recipe('    variables: [tas]\n    select: {time: [1990, null], lat: ["north", 50]}\n'))).toEqual([
      messages.netcdfSelectValue('time', 1990, 'date (YYYY-MM-DD)'),
      messages.netcdfSelectValue('lat', 'north', 'number'),
    ]);
  });

  it('reach the source step through the plan, so each option is part of its key', () => {
    const dir = makeFolder({ 'recipe.yaml': withSource('    delimiter: ";"\n    decimal: ","\n    undeclared: error\n'), 'data/obs.csv': smallData() });
    const { recipe, origin } = loadRecipe(join(dir, 'recipe.yaml'));
    const step = planRecipe(recipe, origin).steps.find((s) => s.kind === 'source')!;
    const { file: _file, sha256: _pin, ...options } = recipe.sources.obs;
    expect(step.params).toEqual({ ...options, sha256: expect.any(String) });
    expect(step.params).toMatchObject({ delimiter: ';', decimal: ',', undeclared: 'error', header: true });
  });
});
