import { copyFileSync, existsSync, mkdirSync, readFileSync, readdirSync, symlinkSync, utimesSync, writeFileSync } from 'node:fs';
import { join } from 'node:path';
import { describe, expect, it } from 'vitest';
import { Cache } from '../../runner/cache.js';
import { placeEntry } from '../../core/codec.js';
import { cachePrune } from '../../runner/cache-admin.js';
import { sha256 } from '../../core/hash.js';
import { makeFolder } from '../helpers.js';

const key = sha256('a step');
const other = sha256('another step');
const bytes = new Uint8Array([1, 2, 3, 250]);
/** Any step kind; the cache keeps one folder per kind. */
const kind = 'fit';
const entryOf = (dir: string, k = key) => join(dir, kind, k);
const leftovers = (dir: string) => (existsSync(dir) ? readdirSync(dir, { recursive: true, encoding: 'utf8' }).filter((f) => f.includes('.tmp-')) : []);
const fsError = (code: string) => Object.assign(new Error(`${code}: simulated`), { code });

describe('cache', () => {
  it('misses when nothing is stored', () => {
    expect(new Cache(makeFolder({})).get({ kind, key, codec: 'json' })).toEqual({ status: 'miss' });
  });

  it('returns stored bytes on a hit, under <kind>/<key>', () => {
    const dir = makeFolder({});
    const cache = new Cache(dir);
    expect(cache.put({ kind, key, codec: 'json' }, bytes)).toEqual({ stored: true });
    const got = cache.get({ kind, key, codec: 'json' });
    expect(got.status).toBe('hit');
    expect(got.status === 'hit' && Array.from(got.bytes)).toEqual(Array.from(bytes));
    expect(readdirSync(join(dir, kind))).toEqual([key]);
  });

  it('placed for reading, gives the bytes of a hit at a multiple of 8, a large one in shared memory', () => {
    // so a fitted forest in the entry is read in place (models/serialize.ts) by every thread it goes to
    const cache = new Cache(makeFolder({}));
    const big = new Uint8Array(2_000_000).map((_, i) => i % 251);
    for (const codec of ['json', 'frame', 'bytes', 'record'] as const) {
      cache.put({ kind, key, codec }, big);
      const got = cache.get({ kind, key, codec });
      if (got.status !== 'hit') throw new Error('a miss');
      for (const placed of [placeEntry(got.bytes), placeEntry(got.bytes.subarray(0, 1000))]) {
        expect([placed.byteOffset % 8, placed[999]]).toEqual([0, 999 % 251]);
      }
      expect(placeEntry(got.bytes).buffer).toBeInstanceOf(SharedArrayBuffer);
      expect(placeEntry(got.bytes).length).toBe(2_000_000);
      expect(placeEntry(got.bytes.subarray(0, 1000)).buffer).not.toBeInstanceOf(SharedArrayBuffer);
    }
  });

  it('heads each entry with its format, key, codec and checksum', () => {
    const dir = makeFolder({});
    new Cache(dir).put({ kind, key, codec: 'frame' }, bytes);
    const raw = readFileSync(entryOf(dir));
    const lines = raw.toString('latin1').split('\n').slice(0, 4);
    expect(lines.slice(0, 3)).toEqual(['dendrolog-cache-entry 2', `key ${key}`, 'codec frame']);
    // the checksum covers the lines above it and the output, so none can change unnoticed
    const head = Buffer.from(lines.slice(0, 3).join('\n') + '\n', 'latin1');
    expect(lines[3]).toBe(`sha256 ${sha256(Buffer.concat([head, bytes]))}`);
    expect(Array.from(raw.subarray(raw.length - bytes.length))).toEqual(Array.from(bytes));
  });

  it('discards a corrupted entry and removes it', () => {
    const dir = makeFolder({});
    const cache = new Cache(dir);
    cache.put({ kind, key, codec: 'json' }, bytes);
    const raw = readFileSync(entryOf(dir));
    raw[raw.length - 1] ^= 0xff;
    writeFileSync(entryOf(dir), raw);
    expect(cache.get({ kind, key, codec: 'json' })).toEqual({ status: 'discarded', reason: 'checksum' });
    expect(cache.get({ kind, key, codec: 'json' })).toEqual({ status: 'miss' });
  });

  it('treats a truncated or empty entry as corrupt', () => {
    const dir = makeFolder({});
    const cache = new Cache(dir);
    cache.put({ kind, key, codec: 'json' }, bytes);
    writeFileSync(entryOf(dir), 'dendrolog-cache-entry 2\nkey ab');
    expect(cache.get({ kind, key, codec: 'json' })).toEqual({ status: 'discarded', reason: 'checksum' });
    cache.put({ kind, key, codec: 'json' }, bytes);
    writeFileSync(entryOf(dir), '');
    expect(cache.get({ kind, key, codec: 'json' })).toEqual({ status: 'discarded', reason: 'checksum' });
  });

  it('refuses an entry copied over another key, naming the key it holds', () => {
    const dir = makeFolder({});
    const cache = new Cache(dir);
    cache.put({ kind, key, codec: 'json' }, bytes);
    cache.put({ kind, key: other, codec: 'json' }, new Uint8Array([9]));
    copyFileSync(entryOf(dir, other), entryOf(dir, key));
    expect(cache.get({ kind, key, codec: 'json' })).toEqual({ status: 'discarded', reason: 'key', storedKey: other });
    expect(existsSync(entryOf(dir))).toBe(false);
    expect(cache.get({ kind, key: other, codec: 'json' }).status).toBe('hit');
  });

  it('refuses an entry in another codec than the step writes', () => {
    const dir = makeFolder({});
    const cache = new Cache(dir);
    cache.put({ kind, key, codec: 'json' }, bytes);
    expect(cache.get({ kind, key, codec: 'frame' })).toEqual({ status: 'discarded', reason: 'codec', storedCodec: 'json' });
  });

  it('reads an entry of the previous layout as a plain miss, and overwrites it', () => {
    const dir = makeFolder({});
    const cache = new Cache(dir);
    mkdirSync(join(dir, kind));
    writeFileSync(entryOf(dir), Buffer.concat([Buffer.from(sha256(bytes) + '\n', 'latin1'), bytes]));
    expect(cache.get({ kind, key, codec: 'json' })).toEqual({ status: 'miss' });
    cache.put({ kind, key, codec: 'json' }, bytes);
    expect(cache.get({ kind, key, codec: 'json' }).status).toBe('hit');
  });

  it('discards an entry in a format it does not know, quoting its start', () => {
    const dir = makeFolder({});
    mkdirSync(join(dir, kind));
    writeFileSync(entryOf(dir), 'PK\u0003\u0004 a zip file\n');
    expect(new Cache(dir).get({ kind, key, codec: 'json' })).toEqual({ status: 'discarded', reason: 'format', start: 'PK?? a zip file' });
  });

  it('leaves no temporary files behind', () => {
    const dir = makeFolder({});
    new Cache(dir).put({ kind, key, codec: 'json' }, bytes);
    expect(leftovers(dir)).toEqual([]);
  });
});

describe('cache on a full or read-only disk', () => {
  it('reports ENOSPC from a write that got halfway, and removes the partial temporary file', () => {
    const dir = makeFolder({});
    const cache = new Cache(dir, {
      writeChunksSync: (p, chunks) => {
        writeFileSync(p, chunks[0].subarray(0, 3));
        throw fsError('ENOSPC');
      },
    });
    expect(cache.put({ kind, key, codec: 'json' }, bytes)).toEqual({ stored: false, code: 'ENOSPC', detail: 'ENOSPC: simulated' });
    expect(leftovers(dir)).toEqual([]);
    expect(readdirSync(join(dir, kind))).toEqual([]);
    expect(cache.get({ kind, key, codec: 'json' })).toEqual({ status: 'miss' });
  });

  it('reports EROFS when the folder cannot be made, and EACCES when the rename is refused', () => {
    const dir = makeFolder({});
    const readOnly = new Cache(join(dir, 'cache'), { mkdirSync: () => { throw fsError('EROFS'); } });
    expect(readOnly.put({ kind, key, codec: 'json' }, bytes)).toMatchObject({ stored: false, code: 'EROFS' });
    const noRename = new Cache(dir, { renameSync: () => { throw fsError('EACCES'); } });
    expect(noRename.put({ kind, key, codec: 'json' }, bytes)).toMatchObject({ stored: false, code: 'EACCES' });
    expect(leftovers(dir)).toEqual([]);
  });

  it('reports ENOTDIR for a cache folder below a file (what a real unwritable path gives, even as root)', () => {
    const dir = makeFolder({ 'a-file': 'x' });
    const cache = new Cache(join(dir, 'a-file', 'cache'));
    expect(cache.put({ kind, key, codec: 'json' }, bytes)).toMatchObject({ stored: false, code: 'ENOTDIR' });
    expect(cache.get({ kind, key, codec: 'json' })).toEqual({ status: 'miss' });
  });

  it('rethrows an error that is not the file system’s, still without a temporary file', () => {
    const dir = makeFolder({});
    const cache = new Cache(dir, {
      writeChunksSync: (p, chunks) => {
        writeFileSync(p, Buffer.concat(chunks));
        throw new TypeError('a bug');
      },
    });
    expect(() => cache.put({ kind, key, codec: 'json' }, bytes)).toThrow('a bug');
    expect(leftovers(dir)).toEqual([]);
  });
});

describe('cache temporaries', () => {
  it('sweeps only abandoned temporary files of its own naming, leaving fresh ones and anything else', () => {
    const dir = makeFolder({});
    const cache = new Cache(dir);
    const key = sha256('a');
    expect(cache.put({ kind, key, codec: 'json' }, new Uint8Array([1])).stored).toBe(true);
    const shard = join(dir, kind);
    const old = join(shard, `${key}.tmp-123-0123456789ab`);
    const fresh = join(shard, `${key}.tmp-124-0123456789ab`);
    const foreign = join(shard, 'notes.tmp-1-0123456789ab');
    for (const f of [old, fresh, foreign]) writeFileSync(f, 'x');
    const hour = 3_600_000;
    const now = Date.now() + hour;
    utimesSync(fresh, new Date(now - 1000), new Date(now - 1000));
    expect(cache.sweepTemporaries(hour, now)).toBe(1);
    expect(existsSync(old)).toBe(false);
    expect(existsSync(fresh)).toBe(true);
    expect(existsSync(foreign)).toBe(true);
    expect(cache.get({ kind, key, codec: 'json' }).status).toBe('hit');
    // a cache folder that does not exist yet has nothing to sweep
    expect(new Cache(join(dir, 'none')).sweepTemporaries(hour)).toBe(0);
  });
});

describe('cache prune', () => {
  it('removes only files that are dendrolog entries, never through a linked kind folder, and never one of the last hour', () => {
    const dir = makeFolder({});
    const cache = new Cache(dir);
    const old = sha256('old');
    const fresh = sha256('fresh');
    cache.put({ kind, key: old, codec: 'json' }, bytes);
    cache.put({ kind, key: fresh, codec: 'json' }, bytes);
    // a file named like an entry that is something else, and a linked folder named like a kind
    mkdirSync(join(dir, 'sha256'));
    const blob = join(dir, 'sha256', sha256('blob'));
    writeFileSync(blob, 'not a cache entry');
    const elsewhere = makeFolder({ [sha256('linked')]: `dendrolog-cache-entry 2\nkey x\n` });
    symlinkSync(elsewhere, join(dir, 'linked'));
    const day = 86_400_000;
    for (const p of [entryOf(dir, old), blob, join(elsewhere, sha256('linked'))]) utimesSync(p, new Date(Date.now() - 2 * day), new Date(Date.now() - 2 * day));
    const r = cachePrune(cache, { olderThanDays: 1 });
    expect(r.removed.map((f) => f.key)).toEqual([old]);
    expect([existsSync(entryOf(dir, old)), existsSync(entryOf(dir, fresh)), existsSync(blob), existsSync(join(elsewhere, sha256('linked')))]).toEqual([false, true, true, true]);
  });
});
