import { spawn, spawnSync, type ChildProcess } from 'node:child_process';
import { cpSync, existsSync, mkdtempSync, readFileSync, rmSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { join, resolve } from 'node:path';
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { ALLOCATOR_SETTINGS, allocatorEnvironment } from '../../runner/launch.js';

const root = resolve(import.meta.dirname, '..', '..');
const bin = join(root, 'bin', 'dendrolog.js');

/** The environment without any allocator setting, as most users have it. */
function plainEnv(): NodeJS.ProcessEnv {
  return Object.fromEntries(Object.entries(process.env).filter(([k]) => !k.startsWith('MALLOC_') && k !== 'GLIBC_TUNABLES'));
}

describe('allocatorEnvironment', () => {
  it('adds the settings for the commands that grow or use forests, on Linux', () => {
    for (const command of ['run', 'predict', 'task']) {
      const env = allocatorEnvironment([command, 'x.yaml'], { PATH: '/bin' }, 'linux');
      expect(env).toEqual({ PATH: '/bin', MALLOC_ARENA_MAX: '2', MALLOC_MMAP_THRESHOLD_: '1048576' });
    }
  });

  it('leaves short commands, other systems and a user who tunes the allocator alone', () => {
    expect(allocatorEnvironment(['check', 'x.yaml'], {}, 'linux')).toBeNull();
    expect(allocatorEnvironment(['--help'], {}, 'linux')).toBeNull();
    expect(allocatorEnvironment([], {}, 'linux')).toBeNull();
    expect(allocatorEnvironment(['run', 'x.yaml'], {}, 'darwin')).toBeNull();
    // any glibc malloc variable or tunable of the user's own: nothing is added, nothing changed
    expect(allocatorEnvironment(['run', 'x.yaml'], { MALLOC_ARENA_MAX: '8' }, 'linux')).toBeNull();
    expect(allocatorEnvironment(['run', 'x.yaml'], { MALLOC_TRIM_THRESHOLD_: '0' }, 'linux')).toBeNull();
    expect(allocatorEnvironment(['run', 'x.yaml'], { GLIBC_TUNABLES: 'glibc.malloc.arena_max=4' }, 'linux')).toBeNull();
  });

  it('does not change the environment it is given', () => {
    const env = { PATH: '/bin' };
    allocatorEnvironment(['run'], env, 'linux');
    expect(env).toEqual({ PATH: '/bin' });
    expect(Object.isFrozen(ALLOCATOR_SETTINGS)).toBe(true);
  });
});

/** The pids of a process's children (Linux's /proc), or [] once it has none or is gone. */
function childrenOf(pid: number): number[] {
  try {
    return readFileSync(`/proc/${pid}/task/${pid}/children`, 'utf8').trim().split(/\s+/).filter(Boolean).map(Number);
  } catch {
    return [];
  }
}

/** A process's first child once it runs `program` (between fork and exec its environment is not yet the new one). */
async function firstChild(pid: number, program = bin): Promise<number> {
  for (let i = 0; i < 500; i++) {
    const c = childrenOf(pid)[0];
    if (c !== undefined && commandLine(c).includes(program)) return c;
    await new Promise((r) => setTimeout(r, 10));
  }
  throw new Error(`process ${pid} started no child running ${program} within 5 s`);
}

function commandLine(pid: number): string[] {
  try {
    return readFileSync(`/proc/${pid}/cmdline`, 'utf8').split('\0');
  } catch {
    return [];
  }
}

/** Whether a process is gone within 5 s (an orphan is reaped by init, a moment later). */
async function gone(pid: number): Promise<boolean> {
  for (let i = 0; i < 500 && existsSync(`/proc/${pid}`); i++) await new Promise((r) => setTimeout(r, 10));
  return !existsSync(`/proc/${pid}`);
}

function ended(p: ChildProcess): Promise<{ code: number | null; signal: NodeJS.Signals | null }> {
  return new Promise((done) => p.on('exit', (code, signal) => done({ code, signal })));
}

describe.runIf(process.platform === 'linux')('the launcher on Linux (built bin/dendrolog.js)', () => {
  let work: string;
  beforeAll(() => {
    if (!existsSync(join(root, 'dist', 'runner', 'launch.js'))) throw new Error('dist/ is missing: run "npm run build" first (npm test does)');
    work = mkdtempSync(join(tmpdir(), 'dendrolog-launch-'));
    cpSync(join(root, 'recipes', 'lake-chlorophyll'), join(work, 'lake'), { recursive: true, filter: (src) => !src.includes(join('lake-chlorophyll', 'out')) });
  });
  afterAll(() => rmSync(work, { recursive: true, force: true }));

  const runArgs = () => [bin, 'run', 'lake/lake-chlorophyll.yaml', '--no-cache', '--out', join(work, 'out')];

  it('runs the command in a child with the allocator settings, and a SIGTERM to the launcher ends both', async () => {
    const p = spawn(process.execPath, runArgs(), { cwd: work, env: plainEnv(), stdio: 'ignore' });
    const child = await firstChild(p.pid!);
    const environ = readFileSync(`/proc/${child}/environ`, 'utf8').split('\0');
    expect(environ).toContain('MALLOC_ARENA_MAX=2');
    expect(environ).toContain('MALLOC_MMAP_THRESHOLD_=1048576');
    expect(readFileSync(`/proc/${child}/cmdline`, 'utf8').split('\0')).toEqual(expect.arrayContaining([bin, 'run', 'lake/lake-chlorophyll.yaml']));
    p.kill('SIGTERM');
    expect(await ended(p)).toEqual({ code: null, signal: 'SIGTERM' });
    expect(await gone(child)).toBe(true);
  });

  it('ends by SIGINT when a terminal sends it to the whole process group', async () => {
    const p = spawn(process.execPath, runArgs(), { cwd: work, env: plainEnv(), stdio: 'ignore', detached: true });
    const child = await firstChild(p.pid!);
    process.kill(-p.pid!, 'SIGINT');
    expect(await ended(p)).toEqual({ code: null, signal: 'SIGINT' });
    expect(await gone(child)).toBe(true);
  });

  it("passes on the child's exit code and messages", () => {
    const r = spawnSync(process.execPath, [bin, 'run', 'no-such-recipe.yaml'], { cwd: work, env: plainEnv(), encoding: 'utf8' });
    expect(r.status).toBe(2);
    expect(r.stderr).toMatch(/no-such-recipe\.yaml/);
  });

  it('says what to do when Node cannot be started again, and exits 1', () => {
    const launch = join(root, 'dist', 'runner', 'launch.js');
    const code = `process.execPath = '/nonexistent/node'; import(${JSON.stringify(launch)}).then((m) => m.relaunch('x.js', ['run'], {}));`;
    const r = spawnSync(process.execPath, ['--input-type=module', '-e', code], { encoding: 'utf8' });
    expect(r.status).toBe(1);
    expect(r.stderr).toContain('could not start /nonexistent/node again for the command');
    expect(r.stderr).toContain('set MALLOC_ARENA_MAX in the environment to run without a second process');
  });

  it("starts no second process when the user set an allocator variable, and keeps the user's value", async () => {
    const p = spawn(process.execPath, runArgs(), { cwd: work, env: { ...plainEnv(), MALLOC_ARENA_MAX: '4' }, stdio: 'ignore' });
    // the run itself is this process: its environment is the user's, and no child runs bin/dendrolog.js
    await new Promise((r) => setTimeout(r, 1500));
    const environ = readFileSync(`/proc/${p.pid}/environ`, 'utf8').split('\0');
    expect(environ).toContain('MALLOC_ARENA_MAX=4');
    expect(environ.some((e) => e.startsWith('MALLOC_MMAP_THRESHOLD_='))).toBe(false);
    for (const c of childrenOf(p.pid!)) expect(readFileSync(`/proc/${c}/cmdline`, 'utf8')).not.toContain(bin);
    p.kill('SIGTERM');
    expect(await ended(p)).toEqual({ code: null, signal: 'SIGTERM' });
  });
});
