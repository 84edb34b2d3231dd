import { createHash, randomBytes } from 'node:crypto';
import * as fs from 'node:fs';
import { join } from 'node:path';
import type { OutputCodec } from '../core/step-types.js';

/** First line of every entry; a change to the layout below changes the number. */
const FORMAT = 'dendrolog-cache-entry 2';
const HEADER_LIMIT = 512;
/** How `put` names a file before renaming it into place: `<key>.tmp-<pid>-<12 hex>`. */
const TEMPORARY = /^[0-9a-f]{64}\.tmp-\d+-[0-9a-f]{12}$/;
/** A step kind's folder name, as the registry spells kinds. */
export const KIND = /^[a-z][a-z0-9_]*$/;
/** A step key (or a part's key): 64 hex digits. */
export const KEY = /^[0-9a-f]{64}$/;

/** One stored entry as the folder holds it. */
export interface CacheEntryFile {
  kind: string;
  key: string;
  path: string;
  bytes: number;
  mtimeMs: number;
}
/** Age after which an unfinished write's temporary file is taken as abandoned: no write takes an hour. */
export const ABANDONED_WRITE_MS = 3_600_000;

/** Why a stored entry was not used; the entry file is already gone when this is returned. */
export type CacheDiscard =
  | { reason: 'checksum' }
  | { reason: 'key'; storedKey: string }
  | { reason: 'codec'; storedCodec: string }
  | { reason: 'format'; start: string };

/** Result of a cache read: a hit, a miss, or an entry that could not be trusted (already removed). */
export type CacheRead = { status: 'hit'; bytes: Uint8Array } | { status: 'miss' } | ({ status: 'discarded' } & CacheDiscard);

/** Where an entry lives and how its output is packed: the step's kind, its key, and its codec. */
export interface CacheAddress {
  kind: string;
  key: string;
  codec: OutputCodec;
}

/** Result of a cache write: stored, or not, with the file-system error code that prevented it. */
export type CacheWrite = { stored: true } | { stored: false; code: string; detail: string };

/** The file operations the cache uses; tests replace some to simulate a full or read-only disk. */
export interface CacheIo {
  readFileSync(path: string): Buffer;
  /** Writes the chunks one after another as the file's content (an entry's header, then its output, never joined in memory). */
  writeChunksSync(path: string, chunks: Uint8Array[]): void;
  renameSync(from: string, to: string): void;
  mkdirSync(path: string, opts: { recursive: true }): unknown;
  rmSync(path: string, opts: { force: true }): void;
}

const nodeIo: CacheIo = {
  readFileSync: (p) => fs.readFileSync(p),
  writeChunksSync: (p, chunks) => {
    const fd = fs.openSync(p, 'w');
    try {
      for (const c of chunks) for (let at = 0; at < c.length; ) at += fs.writeSync(fd, c, at, c.length - at);
    } finally {
      fs.closeSync(fd);
    }
  },
  renameSync: (a, b) => fs.renameSync(a, b),
  mkdirSync: (p, o) => fs.mkdirSync(p, o),
  rmSync: (p, o) => fs.rmSync(p, o),
};

/**
 * Content-addressed store, one folder per step kind: `<dir>/<kind>/<key>` holds a short text
 * header, then the output (so `du -sh dendrolog-cache/*` shows which kind of step fills it):
 *
 * ```
 * dendrolog-cache-entry 2
 * key <the step key, 64 hex>
 * codec <frame|json|bytes|record>
 * sha256 <64 hex over every byte of the entry except this line>
 * <the packed output>
 * ```
 *
 * The key inside the entry binds it to its path, so an entry copied over another is refused, not
 * served. Writes go to a unique temporary file renamed into place, so readers on a shared
 * filesystem see either nothing or a whole entry, even with several processes writing. A write the
 * file system refuses (full disk, read-only folder) is reported, never thrown, and leaves no
 * temporary file behind.
 *
 * Example: `new Cache('dendrolog-cache').put({kind: 'fit', key, codec: 'record'}, bytes)`, then `.get(same).status === 'hit'`.
 */
export class Cache {
  private readonly io: CacheIo;

  constructor(
    readonly dir: string,
    io: Partial<CacheIo> = {},
  ) {
    this.io = { ...nodeIo, ...io };
  }

  private folderOf(kind: string): string {
    // kinds come from the step registry; anything else must not become a path
    if (!KIND.test(kind)) throw new Error(`not a step kind: ${JSON.stringify(kind)}`);
    return join(this.dir, kind);
  }

  private pathOf(kind: string, key: string): string {
    if (!KEY.test(key)) throw new Error(`not a step key: ${JSON.stringify(key)}`);
    return join(this.folderOf(kind), key);
  }

  /** The entry at the address if it is whole, holds that key and is in the codec the step writes. */
  get({ kind, key, codec }: CacheAddress): CacheRead {
    const p = this.pathOf(kind, key);
    let data: Buffer;
    try {
      data = this.io.readFileSync(p);
    } catch {
      return { status: 'miss' };
    }
    const entry = parseEntry(data);
    // the previous layout (a bare checksum line): unreadable now, and simply recomputed
    if (entry === 'previous') return { status: 'miss' };
    const problem: CacheDiscard | null =
      'reason' in entry
        ? entry
        : entry.storedKey !== key
          ? { reason: 'key', storedKey: entry.storedKey }
          : entry.codec !== codec
            ? { reason: 'codec', storedCodec: entry.codec }
            : null;
    if (problem) {
      this.discard({ kind, key });
      return { status: 'discarded', ...problem };
    }
    const { bytes } = entry as { bytes: Buffer };
    return { status: 'hit', bytes: new Uint8Array(bytes.buffer, bytes.byteOffset, bytes.byteLength) };
  }

  /**
   * Removes the temporary files of writes that never finished (a process killed between writing and
   * renaming, such as a cluster task lost with its node), once they are older than `olderThanMs`, so
   * a write still going on elsewhere on a shared file system is left alone. Only files named as
   * `put` names them are touched; returns how many went.
   *
   * Example: `new Cache(dir).sweepTemporaries(3_600_000)` after a node failure left `<key>.tmp-…` files.
   */
  sweepTemporaries(olderThanMs: number, now = Date.now()): number {
    let removed = 0;
    let kinds: string[];
    try {
      kinds = fs.readdirSync(this.dir).filter((d) => KIND.test(d));
    } catch {
      return 0;
    }
    for (const kind of kinds) {
      let names: string[];
      try {
        names = fs.readdirSync(join(this.dir, kind));
      } catch {
        continue;
      }
      for (const name of names) {
        if (!TEMPORARY.test(name)) continue;
        const path = join(this.dir, kind, name);
        try {
          if (now - fs.statSync(path).mtimeMs < olderThanMs) continue;
          this.io.rmSync(path, { force: true });
          removed++;
        } catch {
          // gone already (another process swept it), or not removable: leave it
        }
      }
    }
    return removed;
  }

  /** Whether an entry file is at the address (its content unchecked: a read checks it). */
  has({ kind, key }: { kind: string; key: string }): boolean {
    return fs.existsSync(this.pathOf(kind, key));
  }

  /**
   * Every entry file of dendrolog's naming (a kind folder, a 64-hex name), in kind and key order;
   * anything else in the folder is not listed, so nothing else is ever touched through this list.
   */
  list(): CacheEntryFile[] {
    const out: CacheEntryFile[] = [];
    let kinds: string[];
    try {
      // a link among the kind folders could lead anywhere: only real folders are listed
      kinds = fs
        .readdirSync(this.dir)
        .filter((d) => KIND.test(d) && fs.lstatSync(join(this.dir, d), { throwIfNoEntry: false })?.isDirectory())
        .sort();
    } catch {
      return out;
    }
    for (const kind of kinds) {
      let names: string[];
      try {
        names = fs.readdirSync(join(this.dir, kind)).filter((n) => KEY.test(n)).sort();
      } catch {
        continue;
      }
      for (const key of names) {
        const path = join(this.dir, kind, key);
        const st = fs.lstatSync(path, { throwIfNoEntry: false });
        if (st?.isFile()) out.push({ kind, key, path, bytes: st.size, mtimeMs: st.mtimeMs });
      }
    }
    return out;
  }

  /**
   * Whether the file starts as dendrolog's entries do (this layout's first line, or the previous
   * layout's checksum line): what prune checks before removing a file, so that a cache folder
   * pointed at something else loses nothing.
   */
  isEntry(f: { path: string }): boolean {
    try {
      const fd = fs.openSync(f.path, 'r');
      try {
        const head = Buffer.alloc(65);
        const n = fs.readSync(fd, head, 0, 65, 0);
        const text = head.subarray(0, n).toString('latin1');
        return text.startsWith(`${FORMAT}\n`) || /^[0-9a-f]{64}\n/.test(text);
      } finally {
        fs.closeSync(fd);
      }
    } catch {
      return false;
    }
  }

  /** The entry's problem when it is read, without removing it: null for a sound entry. */
  inspect({ kind, key }: { kind: string; key: string }): CacheDiscard | null {
    let data: Buffer;
    try {
      data = this.io.readFileSync(this.pathOf(kind, key));
    } catch {
      return null;
    }
    const entry = parseEntry(data);
    if (entry === 'previous') return { reason: 'format', start: 'an older layout' };
    if ('reason' in entry) return entry;
    return entry.storedKey !== key ? { reason: 'key', storedKey: entry.storedKey } : null;
  }

  /** Stores bytes under key; a file-system refusal comes back as `{stored: false}` with its code. */
  put({ kind, key, codec }: CacheAddress, bytes: Uint8Array): CacheWrite {
    const p = this.pathOf(kind, key);
    const tmp = `${p}.tmp-${process.pid}-${randomBytes(6).toString('hex')}`;
    let placed = false;
    try {
      this.io.mkdirSync(this.folderOf(kind), { recursive: true });
      this.io.writeChunksSync(tmp, entryChunks(key, codec, bytes));
      this.io.renameSync(tmp, p);
      placed = true;
      return { stored: true };
    } catch (e) {
      const code = (e as NodeJS.ErrnoException).code;
      if (typeof code !== 'string') throw e;
      return { stored: false, code, detail: (e as Error).message };
    } finally {
      // a full disk leaves a partial or empty temporary file; it must not outlive the failed write
      if (!placed) {
        try {
          this.io.rmSync(tmp, { force: true });
        } catch {
          // the folder refuses removal too; nothing more can be done from here
        }
      }
    }
  }

  /** Removes an entry that could not be used, so the recomputed output replaces it. */
  discard({ kind, key }: { kind: string; key: string }): void {
    try {
      this.io.rmSync(this.pathOf(kind, key), { force: true });
    } catch {
      // a read-only cache keeps the entry; it is discarded again, with a warning, on every read
    }
  }
}

/** The bytes of one entry file: header lines, then the output (not copied: a fitted forest's may be most of the memory). */
function entryChunks(key: string, codec: OutputCodec, bytes: Uint8Array): Uint8Array[] {
  const head = Buffer.from(`${FORMAT}\nkey ${key}\ncodec ${codec}\n`, 'latin1');
  const sum = entrySum(head, bytes);
  return [Buffer.concat([head, Buffer.from(`sha256 ${sum}\n`, 'latin1')]), bytes];
}

/** SHA-256 over the header lines before the checksum and the output, without copying the output. */
function entrySum(head: Uint8Array, bytes: Uint8Array): string {
  return createHash('sha256').update(head).update(bytes).digest('hex');
}

type ParsedEntry = { storedKey: string; codec: string; bytes: Buffer } | CacheDiscard | 'previous';

function parseEntry(data: Buffer): ParsedEntry {
  const lines: string[] = [];
  const ends: number[] = [];
  let at = 0;
  while (lines.length < 4) {
    const nl = data.indexOf(10, at);
    if (nl < 0 || nl > HEADER_LIMIT) break;
    lines.push(data.subarray(at, nl).toString('latin1'));
    at = nl + 1;
    ends.push(at);
  }
  if (lines[0] !== FORMAT) {
    const first = lines[0] ?? data.subarray(0, Math.min(data.length, 40)).toString('latin1');
    if (/^[0-9a-f]{64}$/.test(first)) return 'previous';
    // an entry cut off inside its first line (or empty) is damage, not a foreign format
    if (lines.length === 0 && FORMAT.startsWith(first)) return { reason: 'checksum' };
    return { reason: 'format', start: printable(first) };
  }
  const key = /^key ([0-9a-f]{64})$/.exec(lines[1] ?? '');
  const codec = /^codec ([a-z]+)$/.exec(lines[2] ?? '');
  const sum = /^sha256 ([0-9a-f]{64})$/.exec(lines[3] ?? '');
  if (!key || !codec || !sum) return { reason: 'checksum' };
  const bytes = data.subarray(ends[3]);
  if (entrySum(data.subarray(0, ends[2]), bytes) !== sum[1]) return { reason: 'checksum' };
  return { storedKey: key[1], codec: codec[1], bytes };
}

/** The start of a foreign entry, safe to quote in one terminal line. */
function printable(s: string): string {
  const clean = s.replace(/[^\x20-\x7e]/g, '?');
  return clean.length > 40 ? clean.slice(0, 40) + '…' : clean;
}
