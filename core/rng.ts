import seedrandom from 'seedrandom';
import { sha256 } from './hash.js';

/**
 * The seed string for one random purpose: a hash of (master seed, step key, purpose, index), so
 * results never depend on execution order or on the number of threads.
 *
 * Example: `seedString(7, key, 'holdout', 0)` is the same in every run of the same step.
 */
export function seedString(master: number, stepKey: string, purpose: string, index = 0): string {
  return sha256(`${master}|${stepKey}|${purpose}|${index}`);
}

/**
 * A uniform [0, 1) number for one unit of a split (a group, a row) from the master seed, the
 * purpose and the unit's identity alone, with 52 bits from SHA-256: whatever else in the data
 * changes, the unit draws the same.
 *
 * Example: `unitDraw(7, 'holdout', 'lake-12')` is the same in every run with seed 7.
 */
export function unitDraw(master: number, purpose: string, unit: string): number {
  return parseInt(sha256(`${master}|unit|${purpose}|${unit}`).slice(0, 13), 16) / 2 ** 52;
}

/** A uniform [0, 1) generator (seedrandom's alea) for one purpose. */
export function generator(master: number, stepKey: string, purpose: string, index = 0): () => number {
  return seedrandom.alea(seedString(master, stepKey, purpose, index));
}

/** Fisher–Yates shuffle in place with the given generator. */
export function shuffle<T>(items: T[], rand: () => number): T[] {
  for (let i = items.length - 1; i > 0; i--) {
    const j = Math.floor(rand() * (i + 1));
    const t = items[i];
    items[i] = items[j];
    items[j] = t;
  }
  return items;
}
