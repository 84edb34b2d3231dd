import { lstatSync, readdirSync, readFileSync, rmSync } from 'node:fs';
import { join } from 'node:path';
import { dict } from '../core/dict.js';
import { DendrologError, messages } from '../core/messages.js';
import type { Cache, CacheEntryFile } from './cache.js';
import { OLD_FILES, RUN_FILES } from './run-files.js';
import { ABANDONED_WRITE_MS } from './cache.js';

/** Entries younger than this are never pruned: a run may still need them. */
const RECENT_MS = ABANDONED_WRITE_MS;

/** The cache's size: entries and bytes per step kind, and in all. */
export interface CacheInfo {
  dir: string;
  kinds: { kind: string; entries: number; bytes: number }[];
  entries: number;
  bytes: number;
}

/**
 * Entries and bytes per step kind, from the entry files alone (nothing is read).
 *
 * Example: `cacheInfo(new Cache('dendrolog-cache')).kinds[0]` → `{kind: 'choose', entries: 30, bytes: 81234}`
 */
export function cacheInfo(cache: Cache): CacheInfo {
  const per = dict<{ kind: string; entries: number; bytes: number }>();
  let bytes = 0;
  const files = cache.list();
  for (const f of files) {
    per[f.kind] ??= { kind: f.kind, entries: 0, bytes: 0 };
    per[f.kind].entries++;
    per[f.kind].bytes += f.bytes;
    bytes += f.bytes;
  }
  return { dir: cache.dir, kinds: Object.values(per), entries: files.length, bytes };
}

/** An entry that fails its checksum, holds another key, or is in a layout this version cannot read. */
export interface BadEntry {
  kind: string;
  key: string;
  path: string;
  problem: string;
}

/**
 * Reads every entry and checks its checksum and key, removing nothing: a run discards and
 * recomputes a bad entry by itself, and `cache prune` removes entries on request.
 */
export function cacheCheck(cache: Cache): { checked: number; bad: BadEntry[] } {
  const bad: BadEntry[] = [];
  const files = cache.list();
  for (const f of files) {
    const p = cache.inspect(f);
    if (!p) continue;
    const problem =
      p.reason === 'checksum' ? 'fails its checksum (cut off or changed)'
      : p.reason === 'key' ? `holds the entry of another key (${p.storedKey.slice(0, 12)}…)`
      : p.reason === 'codec' ? `is in another encoding (${p.storedCodec})`
      : `is not in this version's layout (it starts "${p.start}")`;
    bad.push({ kind: f.kind, key: f.key, path: f.path, problem });
  }
  return { checked: files.length, bad };
}

/** Folders never searched for run records: installed packages, version control, and the cache itself. */
const SKIPPED = new Set(['node_modules', '.git']);

/**
 * The step keys every run record under root lists (run-record.json, or manifest.json of older
 * versions), searched recursively without following links. A file that is not a dendrolog run
 * record is passed over.
 *
 * Example: `referencedKeys('analysis', cacheDir).keys.has(key)`
 */
export function referencedKeys(root: string, skip: string): { keys: Set<string>; records: number } {
  const keys = new Set<string>();
  let records = 0;
  const walk = (dir: string) => {
    let names: string[];
    try {
      names = readdirSync(dir);
    } catch {
      return;
    }
    for (const name of names) {
      const path = join(dir, name);
      const st = lstatSync(path, { throwIfNoEntry: false });
      if (!st || st.isSymbolicLink()) continue;
      if (st.isDirectory()) {
        if (!SKIPPED.has(name) && path !== skip) walk(path);
      } else if (name === RUN_FILES.record || name === OLD_FILES.record) {
        try {
          const record = JSON.parse(readFileSync(path, 'utf8')) as { manifest?: unknown; steps?: { key?: unknown }[] };
          if (record.manifest !== 1 || !Array.isArray(record.steps)) continue;
          records++;
          for (const s of record.steps) if (typeof s?.key === 'string') keys.add(s.key);
        } catch {
          // not JSON, or not a run record: nothing it could keep
        }
      }
    }
  };
  walk(root);
  return { keys, records };
}

export interface PruneRule {
  /** Keep what a run record under this folder lists. */
  unusedBy?: string;
  /** Remove only entries last written this many days ago or earlier. */
  olderThanDays?: number;
  /** List, remove nothing. */
  dryRun?: boolean;
}

/**
 * Removes the entries the rule selects: unused by every run record under `unusedBy`, older than
 * `olderThanDays`, or both (then only entries that are both). Only entry files of dendrolog's own
 * naming are candidates; a rule with neither criterion is refused, so a slip never empties a cache.
 *
 * Example: `cachePrune(cache, {unusedBy: 'analysis', dryRun: true}).removed.length`
 */
export function cachePrune(cache: Cache, rule: PruneRule, now = Date.now()): { removed: CacheEntryFile[]; kept: number; bytes: number } {
  if (rule.unusedBy === undefined && rule.olderThanDays === undefined) throw new DendrologError(messages.cachePruneNeedsRule(), 2);
  let used: Set<string> | null = null;
  if (rule.unusedBy !== undefined) {
    // a mistyped folder, or one without run records, would make every entry look unused
    if (!lstatSync(rule.unusedBy, { throwIfNoEntry: false })?.isDirectory()) throw new DendrologError(messages.cachePruneNotAFolder(rule.unusedBy), 2);
    const found = referencedKeys(rule.unusedBy, cache.dir);
    if (found.records === 0) throw new DendrologError(messages.cachePruneNoRecords(rule.unusedBy), 2);
    used = found.keys;
  }
  // entries of the last hour may belong to a run still going (its record not yet written, a
  // cluster task's part not yet merged): they are never pruned
  const cutoff = Math.min(now - RECENT_MS, rule.olderThanDays === undefined ? Infinity : now - rule.olderThanDays * 86_400_000);
  const files = cache.list();
  const removed = files.filter((f) => (used === null || !used.has(f.key)) && f.mtimeMs <= cutoff && cache.isEntry(f));
  if (!rule.dryRun) for (const f of removed) rmSync(f.path, { force: true });
  return { removed, kept: files.length - removed.length, bytes: removed.reduce((a, f) => a + f.bytes, 0) };
}
