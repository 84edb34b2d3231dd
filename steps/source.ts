import { readFileSync } from 'node:fs';
import type { Column, Frame } from '../runner/frame.js';
import { DendrologError, messages } from '../runner/messages.js';
import type { ColumnType } from '../runner/recipe-types.js';
import type { FrameOutput, StepDefinition } from '../runner/step-types.js';
import { closest } from '../runner/suggest.js';
import { parseDelimited } from './readers/csv.js';
import { parseValue, typeLabel } from './readers/values.js';
import { profileFrame } from './profile.js';

export interface SourceParams {
  /** SHA-256 of the file's bytes: the file's identity in the key, so moving it re-runs nothing. */
  sha256: string;
  format: 'csv' | 'tsv';
  columns: Record<string, ColumnType>;
  missing: string[];
}

/**
 * Reads a delimited file into typed columns. Only declared columns are kept; each value must parse
 * as its declared type or be a missing token, else the run stops naming file, line and column.
 */
export const source: StepDefinition<SourceParams, FrameOutput> = {
  kind: 'source',
  version: 1,
  codec: 'frame',
  run(_inputs, params, ctx) {
    const display = ctx.locator.display;
    const text = readFileSync(ctx.locator.path, 'utf8');
    const { header, records } = parseDelimited(text, params.format === 'tsv' ? '\t' : ',', display);
    const missing = new Set(params.missing);
    const columns: Column[] = [];
    for (const [name, type] of Object.entries(params.columns)) {
      const at = header.indexOf(name);
      if (at < 0) throw new DendrologError(messages.columnNotInFile(display, name, header, closest(name, header)), 1);
      const numeric = type === 'number' || type === 'date';
      const values = numeric ? new Float64Array(records.length) : new Array<string | null>(records.length);
      for (let r = 0; r < records.length; r++) {
        const raw = records[r].fields[at];
        const v = parseValue(raw, type, missing);
        if (v === undefined) {
          throw new DendrologError(messages.valueParse(display, records[r].line, name, raw, typeLabel(type)), 1);
        }
        values[r] = numeric ? (v === null ? NaN : (v as number)) : (v as string | null);
      }
      columns.push({ name, type, values } as Column);
    }
    const frame: Frame = { rows: records.length, columns };
    return {
      frame,
      notes: {
        rowsIn: records.length,
        rowsOut: records.length,
        detail: `read ${records.length} rows and ${columns.length} declared columns of ${header.length} in the file`,
        extra: { profile: profileFrame(frame), fileColumns: header.length },
      },
    };
  },
  summary: (o) => `${o.frame.rows.toLocaleString('en')} rows`,
};
