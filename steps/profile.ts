import { isMissing, type Frame } from '../core/frame.js';
import type { ColumnType } from '../core/recipe-types.js';

export interface ColumnProfile {
  name: string;
  type: ColumnType;
  missing: number;
  min?: number;
  max?: number;
  /** Distinct text values with counts, most frequent first (at most 12). */
  categories?: { value: string; count: number }[];
  distinct?: number;
}

/**
 * Per-column facts for the report's data section: type, missing count, range or categories.
 *
 * Example: `profileFrame(f)[0]` might be `{name: 'tp_ug_l', type: 'number', missing: 3, min: 2.1, max: 410}`.
 */
export function profileFrame(frame: Frame): ColumnProfile[] {
  return frame.columns.map((c) => {
    let missing = 0;
    for (let i = 0; i < frame.rows; i++) if (isMissing(c, i)) missing++;
    if (c.values instanceof Float64Array) {
      let min = Infinity;
      let max = -Infinity;
      for (const v of c.values) {
        if (Number.isNaN(v)) continue;
        if (v < min) min = v;
        if (v > max) max = v;
      }
      return min <= max ? { name: c.name, type: c.type, missing, min, max } : { name: c.name, type: c.type, missing };
    }
    const counts = new Map<string, number>();
    for (const v of c.values) if (v !== null) counts.set(v, (counts.get(v) ?? 0) + 1);
    const sorted = [...counts].sort((a, b) => b[1] - a[1] || (a[0] < b[0] ? -1 : 1));
    return {
      name: c.name,
      type: c.type,
      missing,
      distinct: counts.size,
      categories: sorted.slice(0, 12).map(([value, count]) => ({ value, count })),
    };
  });
}
