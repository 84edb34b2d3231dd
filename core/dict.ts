/**
 * Name-keyed records that are safe for any name a user can choose. A plain object literal inherits
 * `constructor`, `toString` and the `__proto__` accessor from Object.prototype: assigning to
 * `o['__proto__']` replaces its prototype instead of storing a value, and `o['constructor']` reads a
 * function that nobody stored. Records built here have no prototype, so every name is plain data.
 */

/**
 * An empty record without a prototype, optionally filled from entries.
 *
 * Example: `dict<number>([['__proto__', 1]])['__proto__'] === 1`
 */
export function dict<T>(entries?: Iterable<readonly [string, T]>): Record<string, T> {
  const out = Object.create(null) as Record<string, T>;
  if (entries) for (const [k, v] of entries) out[k] = v;
  return out;
}

/** A prototype-free shallow copy of a record (own enumerable keys only). */
export function dictOf<T>(record: Readonly<Record<string, T>> | undefined | null): Record<string, T> {
  return dict(Object.entries(record ?? {}));
}

/** Whether the record holds the name itself (never through its prototype). */
export function has(record: object, name: string): boolean {
  return Object.hasOwn(record, name);
}

/** The record's own value for a name, or undefined. */
export function own<T>(record: Readonly<Record<string, T>>, name: string): T | undefined {
  return Object.hasOwn(record, name) ? record[name] : undefined;
}

/**
 * JSON.parse whose objects have no prototype, so names read back from a cache entry or a run record
 * are plain data too. Arrays stay arrays.
 *
 * Example: `parseJson('{"constructor": 1}').constructor === 1`
 */
export function parseJson(text: string): unknown {
  return JSON.parse(text, (_k, v: unknown) =>
    v !== null && typeof v === 'object' && !Array.isArray(v) ? Object.assign(Object.create(null) as object, v) : v,
  );
}

/**
 * A fixed lookup table without a prototype, for tables indexed by text that comes from a file or a
 * recipe (an extension, a unit, a format name): a miss is undefined, never an Object.prototype member.
 *
 * Example: `table({day: 86400000})['constructor'] === undefined`
 */
export function table<T extends object>(entries: T): Readonly<T> {
  return Object.freeze(Object.assign(Object.create(null) as T, entries));
}
