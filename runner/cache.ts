import { randomBytes } from 'node:crypto';
import { mkdirSync, readFileSync, renameSync, rmSync, writeFileSync, existsSync } from 'node:fs';
import { join } from 'node:path';
import { sha256 } from './hash.js';

/** Result of a cache read: a hit, a miss, or an entry that failed its checksum (already removed). */
export type CacheRead = { status: 'hit'; bytes: Uint8Array } | { status: 'miss' } | { status: 'corrupt' };

/**
 * Content-addressed store: `<dir>/<key[0:2]>/<key>` holds a 64-hex checksum line, then the output.
 * Writes go to a unique temporary file renamed into place, so readers on a shared filesystem see
 * either nothing or a whole entry, even with several processes writing.
 *
 * Example: `new Cache('.dendrolog/cache').put(key, bytes)`, then `.get(key).status === 'hit'`.
 */
export class Cache {
  constructor(readonly dir: string) {}

  private pathOf(key: string): string {
    return join(this.dir, key.slice(0, 2), key);
  }

  get(key: string): CacheRead {
    const p = this.pathOf(key);
    if (!existsSync(p)) return { status: 'miss' };
    let data: Buffer;
    try {
      data = readFileSync(p);
    } catch {
      return { status: 'miss' };
    }
    const sum = data.subarray(0, 64).toString('latin1');
    const bytes = data.subarray(65);
    if (data.length < 65 || data[64] !== 10 || sha256(bytes) !== sum) {
      rmSync(p, { force: true });
      return { status: 'corrupt' };
    }
    return { status: 'hit', bytes: new Uint8Array(bytes.buffer, bytes.byteOffset, bytes.byteLength) };
  }

  put(key: string, bytes: Uint8Array): void {
    const p = this.pathOf(key);
    mkdirSync(join(this.dir, key.slice(0, 2)), { recursive: true });
    const tmp = `${p}.tmp-${process.pid}-${randomBytes(6).toString('hex')}`;
    writeFileSync(tmp, Buffer.concat([Buffer.from(sha256(bytes) + '\n', 'latin1'), bytes]));
    renameSync(tmp, p);
  }
}
