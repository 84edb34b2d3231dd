import { randomBytes } from 'node:crypto';
import { closeSync, lstatSync, mkdirSync, mkdtempSync, openSync, readdirSync, renameSync, rmdirSync, rmSync, writeFileSync, writeSync } from 'node:fs';
import { hostname } from 'node:os';
import { basename, dirname, join } from 'node:path';
import { DendrologError, messages } from '../core/messages.js';
import { displayOf } from './paths.js';
import { replaceProblem, RUN_MARKER, runMarker } from './run-folder.js';

/**
 * A leftover folder older than this counts as abandoned even when a process with its pid is alive,
 * since pids are reused; writing a run folder takes seconds.
 */
const ABANDONED_AFTER_MS = 10 * 60 * 1000;

/**
 * Makes target ready to receive a run folder, or stops with exit code 2 saying why it cannot:
 * first recovers what a run killed while writing target left beside it, then refuses a target
 * that is not a run folder dendrolog wrote (see `replaceProblem`). `run` calls it before any work,
 * so a refused folder costs nothing; writing calls it again.
 *
 * Example: `prepareRunFolder('recipes/lake/out/lake')`
 */
export function prepareRunFolder(target: string): void {
  recoverLeftovers(target);
  const problem = replaceProblem(target);
  if (problem) throw new DendrologError(problem, 2);
  // a folder that cannot be made or written (a read-only disk, /proc, a name too long) is found now,
  // not after the work: a probe folder in the nearest folder that exists, removed at once, so a
  // failed run leaves no folder it made
  try {
    let existing = dirname(target);
    while (lstatSync(existing, { throwIfNoEntry: false }) === undefined) existing = dirname(existing);
    rmdirSync(mkdtempSync(join(existing, `.${basename(target)}.probe-`)));
  } catch (e) {
    const code = (e as NodeJS.ErrnoException).code;
    if (typeof code !== 'string') throw e;
    throw new DendrologError(messages.outputUnwritable(displayOf(target), code), 2);
  }
}

/** This machine's name as it appears in leftover folder names, so hosts sharing a disk tell theirs apart. */
const HOST = hostname().replace(/[^A-Za-z0-9.-]/g, '').slice(0, 64) || 'host';

/**
 * Writes a run's files into a fresh temporary folder beside the target, then swaps it into place,
 * so a failed or interrupted run never leaves a half-written report over a good one. The folder
 * gets a marker listing its files; only a folder so marked (or empty, or an unmarked old run
 * folder) is ever replaced.
 *
 * Example: `writeFolderAtomically('out/lake', {'report.html': html})`
 */
export function writeFolderAtomically(target: string, files: Record<string, string | Uint8Array | Uint8Array[]>): void {
  const parent = dirname(target);
  mkdirSync(parent, { recursive: true });
  prepareRunFolder(target);
  const tag = `${process.pid}-${randomBytes(4).toString('hex')}-${HOST}`;
  const staging = join(parent, `.${basename(target)}.writing-${tag}`);
  const old = join(parent, `.${basename(target)}.old-${tag}`);
  let movedAside = false;
  mkdirSync(staging);
  try {
    // the marker comes first, so a staging folder a kill leaves behind is recognisably dendrolog's
    writeFileSync(join(staging, RUN_MARKER), runMarker(files));
    for (const [name, content] of Object.entries(files)) {
      if (Array.isArray(content)) writeChunks(join(staging, name), content);
      else writeFileSync(join(staging, name), content);
    }
    if (exists(target)) {
      renameSync(target, old);
      movedAside = true;
      pauseBetweenRenamesForTest();
      renameSync(staging, target);
      movedAside = false;
      rmSync(old, { recursive: true, force: true });
    } else renameSync(staging, target);
  } catch (e) {
    if (movedAside && !exists(target)) renameSync(old, target);
    rmSync(staging, { recursive: true, force: true });
    throw e;
  }
}

/** Writes a file given in parts (a model file), one after another, without joining them in memory. */
function writeChunks(path: string, chunks: Uint8Array[]): void {
  const fd = openSync(path, 'wx');
  try {
    for (const c of chunks) for (let at = 0; at < c.length; ) at += writeSync(fd, c, at, c.length - at);
  } finally {
    closeSync(fd);
  }
}

function exists(path: string): boolean {
  try {
    lstatSync(path);
    return true;
  } catch {
    return false;
  }
}

/**
 * Deals with the folders a killed run leaves beside its target, named as writeFolderAtomically
 * names them (`.<name>.writing-<pid>-<8 hex>-<host>`, `.<name>.old-…`), once the process
 * that made them is gone: when the kill fell between the two renames the target is missing and the
 * previous run folder sits aside, so that one is put back; the rest are removed. A folder holding
 * anything a run does not write is left alone, whatever its name.
 */
function recoverLeftovers(target: string): void {
  const parent = dirname(target);
  const name = basename(target).replace(/[.*+?^${}()|[\]\\]/g, '\\$&');
  // the host part is absent in folders of versions before it
  const pattern = new RegExp(`^\\.${name}\\.(writing|old)-(\\d+)-[0-9a-f]{8}(?:-([A-Za-z0-9.-]+))?$`);
  let entries: string[];
  try {
    entries = readdirSync(parent);
  } catch {
    return;
  }
  const leftovers: { path: string; kind: string; time: number }[] = [];
  for (const entry of entries) {
    const m = pattern.exec(entry);
    if (!m) continue;
    const path = join(parent, entry);
    const st = lstatSync(path, { throwIfNoEntry: false });
    if (!st?.isDirectory()) continue;
    // a rename sets ctime, so this is when the folder was last written or moved aside
    const time = Math.max(st.mtimeMs, st.ctimeMs);
    if (!abandoned(Number(m[2]), time, m[3] ?? HOST)) continue;
    if (replaceProblem(path) === null) leftovers.push({ path, kind: m[1], time });
  }
  if (!exists(target)) {
    const newest = leftovers.filter((l) => l.kind === 'old').sort((a, b) => b.time - a.time)[0];
    if (newest) {
      renameSync(newest.path, target);
      leftovers.splice(leftovers.indexOf(newest), 1);
    }
  }
  for (const l of leftovers) rmSync(l.path, { recursive: true, force: true });
}

/**
 * Whether the process that made a leftover folder can no longer be writing it. Another host's
 * process ids mean nothing here, so its folders count as abandoned only by age.
 */
function abandoned(pid: number, time: number, host: string): boolean {
  if (Date.now() - time > ABANDONED_AFTER_MS) return true;
  if (host !== HOST) return false;
  // writing is synchronous, so this process is never in the middle of writing another folder
  if (pid === process.pid) return true;
  try {
    process.kill(pid, 0);
    return false;
  } catch (e) {
    return (e as NodeJS.ErrnoException).code !== 'EPERM';
  }
}

/**
 * Test hook for the one moment no run folder is in place: with DENDROLOG_TEST_PAUSE_BETWEEN_RENAMES=1
 * the process says "paused between renames" on stderr and waits up to a minute, so a test can kill
 * it there (test/hostile/output.test.ts). Unset, it does nothing.
 */
function pauseBetweenRenamesForTest(): void {
  if (process.env.DENDROLOG_TEST_PAUSE_BETWEEN_RENAMES !== '1') return;
  writeSync(2, 'dendrolog: paused between renames\n');
  Atomics.wait(new Int32Array(new SharedArrayBuffer(4)), 0, 0, 60_000);
}
