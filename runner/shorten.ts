/**
 * Texts from data can be any length: a category value or a column name of a megabyte would make
 * the report unreadable and the run record huge. Pages and records show such a text shortened,
 * with how much was left out; hashes of the data still cover the whole value.
 */

/** Longest data text the report and the run record show whole. */
export const TEXT_LIMIT = 500;

/** A text cut to `limit` characters, saying how many were left out. */
export function shortenText(s: string, limit = TEXT_LIMIT): string {
  return s.length <= limit ? s : `${s.slice(0, limit)}… (${(s.length - limit).toLocaleString('en-US')} more characters)`;
}

/**
 * A copy of a value with every string longer than `limit` shortened, except under the keys in
 * `keep` (such as rendered figures, or the recipe that verify must rerun exactly).
 *
 * Example: `shortenTexts({a: 'x'.repeat(600)}).a.length` is 500 plus the note.
 */
export function shortenTexts<T>(value: T, keep: ReadonlySet<string> = new Set(), limit = TEXT_LIMIT): T {
  const walk = (v: unknown): unknown => {
    if (typeof v === 'string') return shortenText(v, limit);
    if (Array.isArray(v)) return v.map(walk);
    const proto: unknown = v !== null && typeof v === 'object' ? Object.getPrototypeOf(v) : undefined;
    // plain records only: typed arrays, dates and class instances pass through untouched
    if (proto === Object.prototype || proto === null) {
      const out = Object.create(proto as object | null) as Record<string, unknown>;
      for (const [k, x] of Object.entries(v as Record<string, unknown>)) {
        Object.defineProperty(out, k, { value: keep.has(k) ? x : walk(x), enumerable: true, writable: true, configurable: true });
      }
      return out;
    }
    return v;
  };
  return walk(value) as T;
}
