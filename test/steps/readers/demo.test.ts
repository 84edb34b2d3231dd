import { spawnSync } from 'node:child_process';
import { cpSync, existsSync, readFileSync } from 'node:fs';
import { join, resolve } from 'node:path';
import { describe, expect, it } from 'vitest';
import { makeFolder } from '../../helpers.js';

const root = resolve(import.meta.dirname, '..', '..', '..');

describe('the stream-temperature demo (NetCDF-4 grid joined to station samples), through the built command', () => {
  it('runs end to end and joins every sample to its grid cell and day', () => {
    if (!existsSync(join(root, 'dist', 'runner', 'cli.js'))) throw new Error('dist/ is missing: run "npm run build" first (npm test does)');
    const work = makeFolder({});
    cpSync(join(root, 'recipes', 'stream-temperature'), join(work, 'stream'), {
      recursive: true,
      filter: (src) => !src.includes(join('stream-temperature', 'out')),
    });
    const r = spawnSync(process.execPath, [join(root, 'bin', 'dendrolog.js'), 'run', 'stream/stream-temperature.yaml', '--no-cache'], { cwd: work, encoding: 'utf8' });
    expect(r.stderr).toBe('');
    expect(r.status).toBe(0);
    const samples = readFileSync(join(work, 'stream', 'data', 'samples.csv'), 'utf8').trim().split('\n').length - 1;
    // 731 days × 7 latitudes × 9 longitudes in the grid; every sample lies on a grid cell and day
    expect(r.stdout).toMatch(/source air\s+\(46,053 rows\)/);
    expect(r.stdout).toContain(`join[0] air  (${samples.toLocaleString('en')} rows)`);
    const report = readFileSync(join(work, 'stream', 'out', 'stream-temperature', 'report.html'), 'utf8');
    // its folds are half-degree blocks: the protocol says so and maps the rows by fold
    expect(report).toContain('4 folds by spatial blocks (squares of 0.5 on lon and lat, each whole on one side)');
    expect(report).toContain('<figure class="plot" id="fig-split-map">');
    const manifest = JSON.parse(readFileSync(join(work, 'stream', 'out', 'stream-temperature', 'run-record.json'), 'utf8')) as { recipe: { normalized: { blocks: unknown } } };
    expect(manifest.recipe.normalized.blocks).toEqual({ x: 'lon', y: 'lat', size: 0.5 });
  });
});
