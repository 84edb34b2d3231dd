/**
 * Where dendrolog writes: a run folder replaces only a folder that dendrolog wrote (or an empty one),
 * report.folder stays inside the recipe's folder, predict never writes over what it reads or over
 * the run folder, and a run killed between the two renames of its output folder loses nothing.
 */
import { spawn, spawnSync } from 'node:child_process';
import { existsSync, linkSync, mkdirSync, readdirSync, readFileSync, symlinkSync, writeFileSync } from 'node:fs';
import { join, resolve } from 'node:path';
import { describe, expect, it } from 'vitest';
import { cli, expectOutcome, lineColOf, scenario, treeHash } from './harness.js';
import { messages } from '../../core/messages.js';
import { displayOf } from '../../runner/recipe.js';
import { RUN_MARKER } from '../../runner/run-folder.js';
import { makeFolder, SMALL_RECIPE, smallData } from '../helpers.js';

const runArgs = (s: { recipe: string; cache: string }, ...more: string[]) => ['run', s.recipe, '--cache', s.cache, '--workers', '1', ...more];

/** A scenario that has been run once, so out/small is a run folder. */
async function ranScenario(files: Record<string, string> = {}) {
  const s = scenario(files);
  const r = await cli(runArgs(s));
  expect(r.code).toBe(0);
  return { ...s, run: join(s.dir, 'out', 'small') };
}

/** The pid of a process that has already ended. */
function deadPid(): number {
  const child = spawnSync(process.execPath, ['-e', 'process.stdout.write(String(process.pid))'], { encoding: 'utf8' });
  return Number(child.stdout);
}

describe('a run folder replaces only what dendrolog wrote', () => {
  it('refuses --out naming the recipe\'s data folder, and leaves the data as it was', async () => {
    const s = scenario();
    await expectOutcome(s.dir, runArgs(s, '--out', join(s.dir, 'data')), { code: 2, err: messages.outputFolderNotDendrologs(displayOf(join(s.dir, 'data'))) });
    expect(readFileSync(join(s.dir, 'data/obs.csv'), 'utf8')).toBe(smallData());
  });

  it('refuses --out naming the folder that holds the recipe', async () => {
    const s = scenario();
    await expectOutcome(s.dir, runArgs(s, '--out', s.dir), { code: 2, err: messages.outputFolderNotDendrologs(displayOf(s.dir)) });
  });

  it('refuses a default run folder that is a folder of the user\'s files', async () => {
    const s = scenario({ 'out/small/notes.txt': 'my notes\n' });
    await expectOutcome(s.dir, runArgs(s), { code: 2, err: messages.outputFolderNotDendrologs(displayOf(join(s.dir, 'out/small'))) });
  });

  it('refuses --out that is a link to a folder of the user\'s files, leaving link and folder alone', async () => {
    const s = scenario({ 'mine/thesis.tex': 'chapter 1\n' });
    symlinkSync(join(s.dir, 'mine'), join(s.dir, 'link'));
    await expectOutcome(s.dir, runArgs(s, '--out', join(s.dir, 'link')), { code: 2, err: messages.outputNotAFolder(displayOf(join(s.dir, 'link'))) });
  });

  it('refuses --out that is an existing file', async () => {
    const s = scenario({ 'results.txt': 'keep me\n' });
    await expectOutcome(s.dir, runArgs(s, '--out', join(s.dir, 'results.txt')), {
      code: 2,
      err: messages.outputNotAFolder(displayOf(join(s.dir, 'results.txt'))),
    });
  });

  it('refuses --out below an existing file, before running, naming that file', async () => {
    const s = scenario({ 'results.txt': 'keep me\n' });
    const r = await expectOutcome(s.dir, runArgs(s, '--out', join(s.dir, 'results.txt', 'run')), {
      code: 2,
      err: messages.outputNotAFolder(displayOf(join(s.dir, 'results.txt'))),
    });
    expect(r.out).not.toMatch(/^ran /m);
  });

  it('refuses to replace a run folder into which the user put a file of their own', async () => {
    const s = await ranScenario();
    writeFileSync(join(s.run, 'my-notes.md'), 'do not lose\n');
    await expectOutcome(s.dir, runArgs(s), { code: 2, err: messages.outputFolderHasOtherFiles(displayOf(s.run), ['my-notes.md']) });
  });

  it('fills an existing empty folder, and marks it as a run folder', async () => {
    const s = scenario();
    mkdirSync(join(s.dir, 'empty'));
    await expectOutcome(s.dir, runArgs(s, '--out', join(s.dir, 'empty')), { code: 0, changes: ['empty/'] });
    const marker = JSON.parse(readFileSync(join(s.dir, 'empty', RUN_MARKER), 'utf8'));
    expect(marker.files).toEqual(['model.dendro', 'predictions.csv', 'report.html', 'run-record.json', 'summary.md']);
  });

  it('replaces its own earlier run folder', async () => {
    const s = await ranScenario();
    await expectOutcome(s.dir, runArgs(s), { code: 0, changes: ['out/small/'] });
    expect(readdirSync(join(s.dir, 'out'))).toEqual(['small']);
  });

  it('replaces a run folder of an older dendrolog, which has its files but no marker', async () => {
    const s = await ranScenario();
    const { rmSync } = await import('node:fs');
    rmSync(join(s.run, RUN_MARKER));
    rmSync(join(s.run, 'model.dendro'));
    await expectOutcome(s.dir, runArgs(s), { code: 0, changes: ['out/small/'] });
    expect(existsSync(join(s.run, RUN_MARKER))).toBe(true);
  });

  it('refuses a folder holding only a run-record.json that is not a dendrolog manifest', async () => {
    const s = scenario({ 'out/small/run-record.json': '{"name": "my package"}\n' });
    await expectOutcome(s.dir, runArgs(s), { code: 2, err: messages.outputFolderNotDendrologs(displayOf(join(s.dir, 'out/small'))) });
  });
});

describe('report.folder stays inside the recipe\'s folder', () => {
  const withFolder = (folder: string) => SMALL_RECIPE + `report: {folder: ${JSON.stringify(folder)}}\n`;

  it('refuses ../other at its line and column, and leaves the folder there alone', async () => {
    const text = withFolder('../other');
    const s = scenario({ 'proj/recipe.yaml': text, 'proj/data/obs.csv': smallData(), 'other/small/notes.txt': 'mine\n' });
    const recipe = join(s.dir, 'proj/recipe.yaml');
    const at = `${displayOf(recipe)}:${lineColOf(text, '"../other"')}`;
    await expectOutcome(s.dir, ['run', recipe, '--cache', s.cache, '--workers', '1'], { code: 2, err: `${at}: ${messages.reportFolderEscapes('../other')}` });
    await expectOutcome(s.dir, ['check', recipe], { code: 2, err: `${at}: ${messages.reportFolderEscapes('../other')}` });
  });

  it('refuses an absolute report.folder at its line and column', async () => {
    const s = scenario();
    const target = join(s.dir, 'elsewhere');
    const text = withFolder(target);
    writeFileSync(s.recipe, text);
    await expectOutcome(s.dir, runArgs(s), { code: 2, err: `${displayOf(s.recipe)}:${lineColOf(text, JSON.stringify(target))}: ${messages.reportFolderEscapes(target)}` });
  });

  it('refuses a report.folder that is a link leading out of the recipe\'s folder', async () => {
    const outside = makeFolder({ 'small/notes.txt': 'mine\n' });
    const text = withFolder('out');
    const s = scenario({ 'recipe.yaml': text });
    symlinkSync(outside, join(s.dir, 'out'));
    const before = treeHash(outside);
    await expectOutcome(s.dir, ['check', s.recipe], { code: 2, err: `${displayOf(s.recipe)}:${lineColOf(text, '"out"')}: ${messages.reportFolderEscapes('out')}` });
    await expectOutcome(s.dir, runArgs(s), { code: 2, err: messages.reportFolderEscapes('out') });
    expect(treeHash(outside)).toEqual(before);
  });

  it('still writes wherever --out says, outside the recipe\'s folder', async () => {
    const s = scenario();
    const elsewhere = makeFolder({});
    await expectOutcome(s.dir, runArgs(s, '--out', join(elsewhere, 'run')), { code: 0 });
    expect(existsSync(join(elsewhere, 'run', 'report.html'))).toBe(true);
  });
});

describe('predict --out never writes over what it reads or over the run folder', () => {
  const predict = (s: { run: string; dir: string }, out: string, data = join(s.dir, 'data/obs.csv')) => ['predict', s.run, data, '--out', out];

  it('refuses its own input data file', async () => {
    const s = await ranScenario();
    const data = join(s.dir, 'data/obs.csv');
    await expectOutcome(s.dir, predict(s, data), { code: 2, err: messages.predictionsOverInput(data) });
  });

  it('refuses a hard link to its input data file', async () => {
    const s = await ranScenario();
    linkSync(join(s.dir, 'data/obs.csv'), join(s.dir, 'alias.csv'));
    await expectOutcome(s.dir, predict(s, join(s.dir, 'alias.csv')), { code: 2, err: messages.predictionsOverInput(join(s.dir, 'alias.csv')) });
  });

  it('refuses the run folder\'s run-record.json', async () => {
    const s = await ranScenario();
    const out = join(s.run, 'run-record.json');
    await expectOutcome(s.dir, predict(s, out), { code: 2, err: messages.predictionsIntoRunFolder(out, displayOf(s.run)) });
  });

  it('refuses the run folder\'s model.dendro', async () => {
    const s = await ranScenario();
    const out = join(s.run, 'model.dendro');
    await expectOutcome(s.dir, predict(s, out), { code: 2, err: messages.predictionsIntoRunFolder(out, displayOf(s.run)) });
  });

  it('refuses a new file inside the run folder, also when reached through a link', async () => {
    const s = await ranScenario();
    symlinkSync(s.run, join(s.dir, 'runlink'));
    const out = join(s.dir, 'runlink', 'new.csv');
    await expectOutcome(s.dir, predict(s, out), { code: 2, err: messages.predictionsIntoRunFolder(out, displayOf(s.run)) });
  });

  it('refuses the run\'s recipe', async () => {
    const s = await ranScenario();
    await expectOutcome(s.dir, predict(s, s.recipe), { code: 2, err: messages.predictionsOverRunInput(s.recipe, displayOf(s.recipe)) });
  });

  it('refuses a link that points at the run\'s recipe', async () => {
    const s = await ranScenario();
    symlinkSync(s.recipe, join(s.dir, 'p.csv'));
    const out = join(s.dir, 'p.csv');
    await expectOutcome(s.dir, predict(s, out), { code: 2, err: messages.predictionsNotAFile(out) });
  });

  it('refuses an existing file it did not write', async () => {
    const s = await ranScenario({ 'results.csv': 'a,b\n1,2\n' });
    const out = join(s.dir, 'results.csv');
    await expectOutcome(s.dir, predict(s, out), { code: 2, err: messages.predictionsOverOtherFile(out) });
  });

  it('refuses a folder as --out', async () => {
    const s = await ranScenario({ 'preds/keep.txt': 'x\n' });
    const out = join(s.dir, 'preds');
    await expectOutcome(s.dir, predict(s, out), { code: 2, err: messages.predictionsNotAFile(out) });
  });

  it('refuses a file in the run folder whose name starts with two dots', async () => {
    const s = await ranScenario();
    const out = join(s.run, '..pred.csv');
    await expectOutcome(s.dir, predict(s, out), { code: 2, err: messages.predictionsIntoRunFolder(out, displayOf(s.run)) });
  });

  it('names a --out folder that does not exist, before any work', async () => {
    const s = await ranScenario();
    const out = join(s.dir, 'nowhere', 'p.csv');
    await expectOutcome(s.dir, predict(s, out), { code: 2, err: messages.predictionsFolderMissing(out, displayOf(join(s.dir, 'nowhere'))) });
  });

  it('replaces its own earlier predictions file', async () => {
    const s = await ranScenario({ 'new.csv': smallData().split('\n').slice(0, 20).join('\n') + '\n' });
    const out = join(s.dir, 'p.csv');
    await expectOutcome(s.dir, predict(s, out), { code: 0, changes: ['p.csv'] });
    const first = readFileSync(out, 'utf8');
    await expectOutcome(s.dir, predict(s, out, join(s.dir, 'new.csv')), { code: 0, changes: ['p.csv'] });
    const second = readFileSync(out, 'utf8');
    expect(second.split('\n').length).toBeLessThan(first.split('\n').length);
    expect(readdirSync(s.dir).filter((f) => f.startsWith('.'))).toEqual([]);
  });
});

describe('leftovers of a killed run', () => {
  it('removes a staging folder left by a process that has ended, but not a folder of the same name holding other files', async () => {
    const s = await ranScenario();
    const pid = deadPid();
    const stale = join(s.dir, 'out', `.small.writing-${pid}-0123abcd`);
    mkdirSync(stale);
    writeFileSync(join(stale, RUN_MARKER), readFileSync(join(s.run, RUN_MARKER)));
    writeFileSync(join(stale, 'report.html'), '<html><body>half');
    const foreign = join(s.dir, 'out', `.small.writing-${pid}-89abcdef`);
    mkdirSync(foreign);
    writeFileSync(join(foreign, 'thesis.tex'), 'mine\n');
    await expectOutcome(s.dir, runArgs(s), { code: 0, changes: ['out/small/', `out/.small.writing-${pid}-0123abcd/`] });
    expect(existsSync(stale)).toBe(false);
    expect(readFileSync(join(foreign, 'thesis.tex'), 'utf8')).toBe('mine\n');
  });

  it('restores the previous report when a run was killed between the two renames and the rerun fails', async () => {
    const s = await ranScenario();
    const report = readFileSync(join(s.run, 'report.html'), 'utf8');
    await killBetweenRenames(s);
    writeFileSync(join(s.dir, 'data/obs.csv'), smallData().replace(/\nS2,([^,]*),/, '\nS2,abc,'));
    const r = await cli(runArgs(s));
    expect(r.code).toBe(1);
    expect(readFileSync(join(s.run, 'report.html'), 'utf8')).toBe(report);
    expect(readdirSync(join(s.dir, 'out'))).toEqual(['small']);
  });

  it('after a kill between the two renames, the rerun writes a complete report and leaves nothing behind', async () => {
    const s = await ranScenario();
    await killBetweenRenames(s);
    const r = await cli(runArgs(s));
    expect(r.code, r.err).toBe(0);
    expect(readdirSync(join(s.dir, 'out'))).toEqual(['small']);
    expect(readdirSync(s.run).sort()).toEqual([RUN_MARKER, 'model.dendro', 'predictions.csv', 'report.html', 'run-record.json', 'summary.md']);
    expect(readFileSync(join(s.run, 'report.html'), 'utf8').trimEnd()).toMatch(/<\/html>$/);
    expect(() => JSON.parse(readFileSync(join(s.run, 'run-record.json'), 'utf8'))).not.toThrow();
    const verified = await cli(['verify', s.run, '--workers', '1']);
    expect(verified.code, verified.out + verified.err).toBe(0);
  });
});

/**
 * Runs the recipe again in a child process that stops between moving the old run folder aside and
 * moving the new one into place, kills it there, and checks that the kill left the expected state.
 */
async function killBetweenRenames(s: { dir: string; recipe: string; cache: string; run: string }): Promise<void> {
  const root = resolve(import.meta.dirname, '../..');
  const code = `import('./runner/cli.ts').then(async (m) => { process.exitCode = await m.main(process.argv.slice(1)); })`;
  const child = spawn(process.execPath, ['--import', 'tsx', '-e', code, '--', ...runArgs(s)], {
    cwd: root,
    env: { ...process.env, DENDROLOG_TEST_PAUSE_BETWEEN_RENAMES: '1' },
    stdio: ['ignore', 'ignore', 'pipe'],
  });
  let err = '';
  await new Promise<void>((done, fail) => {
    child.stderr.on('data', (b: Buffer) => {
      err += b.toString();
      if (err.includes('paused between renames')) {
        child.kill('SIGKILL');
        done();
      }
    });
    child.on('exit', (c) => fail(new Error(`the run ended (exit ${c}) before pausing: ${err}`)));
  });
  await new Promise((done) => child.on('exit', done));
  const left = readdirSync(join(s.dir, 'out'));
  expect(left).not.toContain('small');
  expect(left.some((f) => /^\.small\.old-/.test(f))).toBe(true);
  expect(left.some((f) => /^\.small\.writing-/.test(f))).toBe(true);
}
