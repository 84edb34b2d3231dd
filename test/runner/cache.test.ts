import { readFileSync, readdirSync, writeFileSync } from 'node:fs';
import { join } from 'node:path';
import { describe, expect, it } from 'vitest';
import { Cache } from '../../runner/cache.js';
import { sha256 } from '../../runner/hash.js';
import { makeFolder } from '../helpers.js';

const key = sha256('a step');
const bytes = new Uint8Array([1, 2, 3, 250]);

describe('cache', () => {
  it('misses when nothing is stored', () => {
    expect(new Cache(makeFolder({})).get(key)).toEqual({ status: 'miss' });
  });

  it('returns stored bytes on a hit, under <key[0:2]>/<key>', () => {
    const dir = makeFolder({});
    const cache = new Cache(dir);
    cache.put(key, bytes);
    const got = cache.get(key);
    expect(got.status).toBe('hit');
    expect(got.status === 'hit' && Array.from(got.bytes)).toEqual(Array.from(bytes));
    expect(readdirSync(join(dir, key.slice(0, 2)))).toEqual([key]);
  });

  it('reports a corrupted entry and removes it', () => {
    const dir = makeFolder({});
    const cache = new Cache(dir);
    cache.put(key, bytes);
    const path = join(dir, key.slice(0, 2), key);
    const raw = readFileSync(path);
    raw[raw.length - 1] ^= 0xff;
    writeFileSync(path, raw);
    expect(cache.get(key)).toEqual({ status: 'corrupt' });
    expect(cache.get(key)).toEqual({ status: 'miss' });
  });

  it('treats a truncated entry as corrupt', () => {
    const dir = makeFolder({});
    const cache = new Cache(dir);
    cache.put(key, bytes);
    writeFileSync(join(dir, key.slice(0, 2), key), 'abc');
    expect(cache.get(key)).toEqual({ status: 'corrupt' });
  });

  it('leaves no temporary files behind', () => {
    const dir = makeFolder({});
    new Cache(dir).put(key, bytes);
    expect(readdirSync(join(dir, key.slice(0, 2))).filter((f) => f.includes('tmp'))).toEqual([]);
  });
});
