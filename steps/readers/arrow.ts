import { readFileSync } from 'node:fs';
import { tableFromIPC } from '@uwdata/flechette';
import { DendrologError, messages } from '../../core/messages.js';
import type { ReadRequest, ReadResult } from './columns.js';
import { buildColumns } from './json.js';

/**
 * Reads an Arrow IPC file or stream (also Feather version 2) with flechette, the Arrow library
 * arquero uses. Dates and timestamps arrive as dates; 64-bit integers as numbers.
 *
 * Example: `readArrow({path, display: 'a.arrow', columns: {x: 'number'}, ...}).rows`
 */
export function readArrow(req: ReadRequest): ReadResult {
  const bytes = readFileSync(req.path);
  let table: ReturnType<typeof tableFromIPC>;
  try {
    table = tableFromIPC(bytes, { useDate: true });
  } catch (e) {
    throw new DendrologError(messages.sourceUnreadable(req.display, 'Arrow IPC', (e as Error).message), 1);
  }
  const fileColumns = table.schema.fields.map((f) => f.name);
  const arrays = new Map<string, ArrayLike<unknown>>();
  return buildColumns(
    req,
    table.numRows,
    fileColumns,
    (name) => {
      if (!fileColumns.includes(name)) return null;
      let values = arrays.get(name);
      if (!values) {
        values = table.getChild(name).toArray() as ArrayLike<unknown>;
        arrays.set(name, values);
      }
      const v = values;
      return (i) => v[i];
    },
    (i) => `row ${i + 1}`,
  );
}
