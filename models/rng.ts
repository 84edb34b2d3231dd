/**
 * Seeded pseudo-random numbers for the forest engine.
 *
 * Every random choice (a tree's bootstrap sample, the features tried at each split, a permutation)
 * draws from its own generator whose seed is a SHA-256 hash of the caller's seed string and the
 * purpose and index of that choice. Results therefore depend only on (seed, purpose, index), never on
 * the order in which trees are grown or on how many worker threads grow them.
 *
 * The generator is SFC32 (Chris Doty-Humphrey's "small fast counting" generator from PractRand,
 * 128 bits of state, 32-bit output). It passes PractRand and BigCrush, needs only 32-bit integer
 * arithmetic (fast in V8), and its counter word guarantees a period of at least 2^32 from any seed.
 *
 * Example: `const g = rngFor('seed-7', 'tree', 3); g.int(10)` gives the same integer in 0..9 on every run.
 */
import { createHash } from 'node:crypto';

const TWO_POW_32 = 4294967296;
const INV_TWO_POW_32 = 1 / 4294967296;

/** An SFC32 generator. Not for cryptography. */
export class Sfc32 {
  private a: number;
  private b: number;
  private c: number;
  private d: number;

  constructor(a: number, b: number, c: number, d: number) {
    this.a = a | 0;
    this.b = b | 0;
    this.c = c | 0;
    this.d = d | 0;
    // The hash already gives well-mixed words; a few rounds more spread any weak seed the way the
    // PractRand reference seeding does.
    for (let i = 0; i < 12; i++) this.u32();
  }

  /** A uniform unsigned 32-bit integer. */
  u32(): number {
    const t = (((this.a + this.b) | 0) + this.d) | 0;
    this.d = (this.d + 1) | 0;
    this.a = this.b ^ (this.b >>> 9);
    this.b = (this.c + (this.c << 3)) | 0;
    this.c = (this.c << 21) | (this.c >>> 11);
    this.c = (this.c + t) | 0;
    return t >>> 0;
  }

  /** A uniform double in [0, 1) with 53 random bits. */
  float(): number {
    const hi = this.u32() >>> 5; // 27 bits
    const lo = this.u32() >>> 6; // 26 bits
    return (hi * 67108864 + lo) / 9007199254740992;
  }

  /**
   * A uniform integer in [0, n), 1 <= n <= 2^32, without bias.
   *
   * For n <= 2^21 this is Lemire's multiply-and-shift method (Lemire 2019, "Fast random integer
   * generation in an interval", ACM TOMACS 29(1)): the 32-bit draw times n is exact in a double, its
   * high 32 bits are the result, and a draw is redrawn only when its low 32 bits fall below
   * 2^32 mod n, so the common case needs no division (a modulo of doubles is slow in V8, and this runs
   * once per bootstrap draw and per sampled feature). Larger n use rejection and a modulo.
   */
  int(n: number): number {
    if (n <= 2097152) {
      let m = this.u32() * n;
      let hi = Math.floor(m * INV_TWO_POW_32);
      let lo = m - hi * TWO_POW_32;
      if (lo < n) {
        const threshold = (TWO_POW_32 - n) % n;
        while (lo < threshold) {
          m = this.u32() * n;
          hi = Math.floor(m * INV_TWO_POW_32);
          lo = m - hi * TWO_POW_32;
        }
      }
      return hi;
    }
    const limit = TWO_POW_32 - (TWO_POW_32 % n);
    let u = this.u32();
    while (u >= limit) u = this.u32();
    return u % n;
  }
}

/** Four 32-bit seed words from the SHA-256 of `text`. */
export function seedWords(text: string): [number, number, number, number] {
  const h = createHash('sha256').update(text, 'utf8').digest();
  return [h.readUInt32LE(0), h.readUInt32LE(4), h.readUInt32LE(8), h.readUInt32LE(12)];
}

/**
 * The generator for one purpose: seeded from SHA-256 of `${seed}|${purpose}|${index...}`.
 *
 * Example: `rngFor(seed, 'tree', 12)` is tree 12's generator; `rngFor(seed, 'perm', 3, 0)` is the
 * first permutation of feature 3.
 */
export function rngFor(seed: string, purpose: string, ...index: number[]): Sfc32 {
  const text = [seed, purpose, ...index.map(String)].join('|');
  const [a, b, c, d] = seedWords(text);
  return new Sfc32(a, b, c, d);
}
