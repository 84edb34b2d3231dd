import { writeFileSync } from 'node:fs';
import { tableFromArrays, tableToIPC } from '@uwdata/flechette';
import { parquetWriteBuffer } from 'hyparquet-writer';
import type { Frame } from '../../../core/frame.js';

/** A frame's columns as plain values for the writers: null for missing, Date for dates. */
function plainColumns(frame: Frame): Record<string, unknown[]> {
  return Object.fromEntries(
    frame.columns.map((c) => [
      c.name,
      Array.from(c.values as ArrayLike<number | string | null>, (v) =>
        typeof v === 'number' ? (Number.isNaN(v) ? null : c.type === 'date' ? new Date(v) : v) : v,
      ),
    ]),
  );
}

/** Writes a frame as Parquet with hyparquet-writer (text as STRING, numbers as DOUBLE, dates as TIMESTAMP). */
export function writeParquet(path: string, frame: Frame, rowGroupSize = 2): void {
  const cols = plainColumns(frame);
  const type = (t: string) => (t === 'number' ? 'DOUBLE' : t === 'date' ? 'TIMESTAMP' : 'STRING');
  const bytes = parquetWriteBuffer({
    columnData: frame.columns.map((c) => ({ name: c.name, data: cols[c.name] as never, type: type(c.type) as never, nullable: true })),
    rowGroupSize,
  });
  writeFileSync(path, new Uint8Array(bytes));
}

/** Writes a frame as an Arrow IPC file or stream with flechette (arquero's Arrow library). */
export function writeArrow(path: string, frame: Frame, format: 'file' | 'stream'): void {
  const table = tableFromArrays(plainColumns(frame));
  writeFileSync(path, tableToIPC(table, { format })!);
}
