/**
 * Start-up of the heavy commands on Linux: glibc's allocator settings for many short-lived threads.
 *
 * Node allocates typed arrays with malloc. glibc gives every thread its own arena (up to 8 per core)
 * and, once a large block has been freed, raises its mmap threshold so later blocks of that size come
 * from an arena instead of being mapped. Memory freed in a thread's arena mostly stays with the
 * process after the thread ends, so a million-row run kept 2.8–3.3 GB resident after its fold
 * threads had finished, and the final fit came on top of that. With two arenas and a fixed mmap
 * threshold, large arrays are mapped and unmapped, and what a step frees leaves the process.
 *
 * These settings are read by glibc when the process starts, so the launcher starts the command again
 * in a child process with them in its environment. A user who tunes the allocator (any MALLOC_
 * variable or GLIBC_TUNABLES) keeps their settings untouched and gets no second process.
 *
 * Example: `allocatorEnvironment(['run', 'lake.yaml'], process.env, 'linux')` is the environment to
 * start the run with, or null to run in this process.
 */
import { spawn, type ChildProcess } from 'node:child_process';

/**
 * What dendrolog sets: two arenas, and blocks of 1 MiB and more always mapped, so freed, they go back
 * to the system at once (a fixed threshold also stops glibc raising it). Measured on 2 cores: at
 * 1,000,000 rows the peak was 2,937 MiB in 325 s (two arenas alone: 3,324 MiB in 383 s; neither:
 * 3,478–4,117 MiB); with glibc's default threshold of 128 KiB fixed instead, 100,000-row runs took 3%
 * longer (their per-tree arrays of a few hundred KiB were mapped afresh each time).
 */
export const ALLOCATOR_SETTINGS: Readonly<Record<string, string>> = Object.freeze({ MALLOC_ARENA_MAX: '2', MALLOC_MMAP_THRESHOLD_: '1048576' });

/** The commands that grow or use forests; the others are short and start once. */
const HEAVY_COMMANDS = new Set(['run', 'predict', 'task']);

/** The environment to start `args` with (a copy with the settings added), or null when this process should run it. */
export function allocatorEnvironment(args: readonly string[], env: NodeJS.ProcessEnv, platform: string): NodeJS.ProcessEnv | null {
  if (platform !== 'linux' || !HEAVY_COMMANDS.has(args[0] ?? '')) return null;
  if (Object.keys(env).some((k) => k.startsWith('MALLOC_') || k === 'GLIBC_TUNABLES')) return null;
  return { ...env, ...ALLOCATOR_SETTINGS };
}

/** Signals passed on to the child (a terminal's Ctrl-C reaches both; the child is the one that acts). */
const FORWARDED: NodeJS.Signals[] = ['SIGINT', 'SIGTERM', 'SIGHUP'];

/**
 * Runs `script args` in a child Node with `env` and this process's standard streams and Node
 * options; ends this process as the child ended: with its exit code, or by the same signal.
 */
export function relaunch(script: string, args: readonly string[], env: NodeJS.ProcessEnv): void {
  // listening before the child starts: a signal that comes meanwhile must not end this process alone
  let child: ChildProcess | null = null;
  const pass = (signal: NodeJS.Signals) => {
    child?.kill(signal);
  };
  for (const s of FORWARDED) process.on(s, pass);
  child = spawn(process.execPath, [...process.execArgv, script, ...args], { stdio: 'inherit', env });
  child.on('error', (e) => {
    for (const s of FORWARDED) process.removeListener(s, pass);
    process.stderr.write(`error: could not start ${process.execPath} again for the command: ${e.message}; set MALLOC_ARENA_MAX in the environment to run without a second process\n`);
    process.exitCode = 1;
  });
  child.on('exit', (code, signal) => {
    for (const s of FORWARDED) process.removeListener(s, pass);
    if (signal) process.kill(process.pid, signal);
    else process.exitCode = code ?? 1;
  });
}
