/**
 * Frames as arquero tables, for the steps that evaluate expressions (derive, keep_rows). Kept apart
 * from core/frame.ts so that the steps that never evaluate one (folds, fits, explanations, on every
 * pool thread) do not load arquero.
 */
import * as aq from 'arquero';
import { dict } from './dict.js';
import { ARQUERO_UNSAFE_NAMES, type Frame } from './frame.js';

/** Converts to an arquero table for expressions: missing as null, dates as Date objects. */
export function toArquero(frame: Frame): aq.ColumnTable {
  const data = dict<unknown[]>();
  for (const c of frame.columns) {
    if (ARQUERO_UNSAFE_NAMES.has(c.name)) continue;
    const out = new Array<unknown>(frame.rows);
    for (let i = 0; i < frame.rows; i++) {
      const v = c.values[i];
      if (typeof v === 'number') out[i] = Number.isNaN(v) ? null : c.type === 'date' ? new Date(v) : v;
      else out[i] = v;
    }
    data[c.name] = out;
  }
  return aq.table(data);
}
