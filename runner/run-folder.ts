import { existsSync, lstatSync, readdirSync, readFileSync } from 'node:fs';
import { dirname, join } from 'node:path';
import { DendrologError, messages } from '../core/messages.js';
import { manifestProblems, type Manifest } from './manifest.js';
import { displayOf } from './paths.js';
import { parseJson } from '../core/dict.js';
import { sha256 } from '../core/hash.js';
import { OLD_FILES, RUN_FILES } from './run-files.js';

export { OLD_FILES, RUN_FILES };

/** Where a run folder's record is: the current name, else the old one (with `old` set), else null. */
export function runRecordPath(folder: string): { path: string; old: boolean } | null {
  const now = join(folder, RUN_FILES.record);
  if (existsSync(now)) return { path: now, old: false };
  const old = join(folder, OLD_FILES.record);
  return existsSync(old) ? { path: old, old: true } : null;
}

/**
 * Reads and checks a run folder's run-record.json (or the manifest.json of an older dendrolog, with
 * a one-line notice); stops with a clear message when it is missing or does not match
 * schemas/run-record.v1.json.
 *
 * Example: `readManifest('out/lake').headline.model`
 */
export function readManifest(folder: string, notice: (line: string) => void = (line) => process.stderr.write(`${line}\n`)): Manifest {
  const found = runRecordPath(folder);
  if (!found) throw new DendrologError(messages.notARunFolder(displayOf(folder)), 2);
  const { path } = found;
  if (found.old) notice(messages.oldRunRecordName(displayOf(path), RUN_FILES.record));
  let manifest: unknown;
  try {
    manifest = parseJson(readFileSync(path, 'utf8'));
  } catch (e) {
    throw new DendrologError(messages.manifestUnreadable(displayOf(path), (e as Error).message), 2);
  }
  const problems = manifestProblems(manifest);
  if (problems.length > 0) throw new DendrologError(messages.manifestUnreadable(displayOf(path), problems.slice(0, 3).join('; ')), 2);
  return manifest as Manifest;
}

/** The file that marks a folder as a run folder dendrolog wrote, so only such folders are ever replaced. */
export const RUN_MARKER = '.dendrolog-run';

/** Version of the marker's JSON; a marker of another version is not trusted. */
const MARKER_FORMAT = 1;

/**
 * Files that run folders of dendrolog versions before the marker held. A folder without a marker is
 * taken as such an old run folder only when it holds a dendrolog manifest and nothing but these.
 */
const UNMARKED_RUN_FILES = new Set<string>([...Object.values(OLD_FILES), ...Object.values(RUN_FILES)]);

/**
 * The marker's text: which files dendrolog put in the folder, so that replacing the folder later
 * can tell them from files someone added, and each file's SHA-256, so that verify can tell a file
 * edited or deleted after the run (a report whose numbers were changed by hand) from the run's own.
 *
 * Example: `runMarker({'report.html': html})` → `{"dendrolog_run_folder": 1, "files": ["report.html"], "sha256": {...}}`
 */
export function runMarker(files: Record<string, string | Uint8Array | Uint8Array[]>): string {
  const names = Object.keys(files).sort();
  const sums = Object.fromEntries(names.map((n) => [n, sha256(files[n])]));
  return JSON.stringify({ dendrolog_run_folder: MARKER_FORMAT, files: names, sha256: sums }, null, 2) + '\n';
}

/**
 * What differs between a run folder and what its marker says the run wrote: files missing, replaced
 * by something other than a plain file, or changed since. Empty for an untouched folder, and for a
 * folder written before markers held checksums (nothing to compare with).
 */
export function runFolderChanges(folder: string): string[] {
  let marker: { files?: unknown; sha256?: unknown };
  try {
    if (!lstatSync(join(folder, RUN_MARKER)).isFile()) return [messages.runFileChanged(RUN_MARKER)];
    marker = JSON.parse(readFileSync(join(folder, RUN_MARKER), 'utf8')) as typeof marker;
  } catch {
    return existsSync(join(folder, RUN_MARKER)) ? [messages.runFileChanged(RUN_MARKER)] : [];
  }
  const sums = marker.sha256;
  if (sums === null || typeof sums !== 'object') return [];
  const out: string[] = [];
  for (const [name, sum] of Object.entries(sums as Record<string, unknown>)) {
    const path = join(folder, name);
    const st = lstatSync(path, { throwIfNoEntry: false });
    if (!st) out.push(messages.runFileMissing(name));
    else if (!st.isFile() || sha256(readFileSync(path)) !== sum) out.push(messages.runFileChanged(name));
  }
  return out;
}

/** The files a folder's marker lists, or null when the folder has no readable marker of this format. */
function markedFiles(folder: string): Set<string> | null {
  try {
    // a link could make any folder look marked
    if (!lstatSync(join(folder, RUN_MARKER)).isFile()) return null;
    const marker = JSON.parse(readFileSync(join(folder, RUN_MARKER), 'utf8')) as unknown;
    if (typeof marker !== 'object' || marker === null) return null;
    const { dendrolog_run_folder: format, files } = marker as Record<string, unknown>;
    if (format !== MARKER_FORMAT || !Array.isArray(files) || !files.every((f) => typeof f === 'string')) return null;
    return new Set(files as string[]);
  } catch {
    return null;
  }
}

/** Whether the folder's run record (either name) is a dendrolog manifest (of any version that had `manifest: 1`). */
function holdsDendrologManifest(folder: string): boolean {
  try {
    const found = runRecordPath(folder);
    if (!found) return false;
    const m = JSON.parse(readFileSync(found.path, 'utf8')) as Record<string, unknown>;
    return m.manifest === 1 && typeof m.recipe === 'object' && m.recipe !== null && 'sha256' in m.recipe;
  } catch {
    return false;
  }
}

/**
 * Why the folder at path may not be replaced by a run folder, or null when it may: it is missing,
 * an empty folder, a folder whose marker lists every file in it, or an old run folder that holds a
 * dendrolog manifest and only the files runs wrote. Links are never followed or replaced.
 *
 * Example: `replaceProblem('recipes/lake/data')` → a message naming the folder
 */
export function replaceProblem(path: string): string | null {
  let st;
  try {
    st = lstatSync(path);
  } catch (e) {
    if ((e as NodeJS.ErrnoException).code !== 'ENOTDIR') return null;
    // something on the way is a file, so the run folder could never be made: name it
    let up = dirname(path);
    for (;;) {
      try {
        lstatSync(up);
        return messages.outputNotAFolder(displayOf(up));
      } catch {
        if (dirname(up) === up) return messages.outputNotAFolder(displayOf(path));
        up = dirname(up);
      }
    }
  }
  if (!st.isDirectory()) return messages.outputNotAFolder(displayOf(path));
  const entries = readdirSync(path);
  if (entries.length === 0) return null;
  const plainFile = (name: string) => lstatSync(join(path, name)).isFile();
  const marked = markedFiles(path);
  if (marked) {
    const other = entries.filter((e) => e !== RUN_MARKER && !(marked.has(e) && plainFile(e))).sort();
    return other.length ? messages.outputFolderHasOtherFiles(displayOf(path), other) : null;
  }
  const oldRunFolder = entries.every((e) => UNMARKED_RUN_FILES.has(e) && plainFile(e)) && holdsDendrologManifest(path);
  return oldRunFolder ? null : messages.outputFolderNotDendrologs(displayOf(path));
}
