import { asyncBufferFromFile, parquetMetadataAsync, parquetRead, parquetSchema, type FileMetaData } from 'hyparquet';
import type { Column } from '../../core/frame.js';
import { DendrologError, messages } from '../../core/messages.js';
import type { ColumnType } from '../../core/recipe-types.js';
import { closest } from '../../core/suggest.js';
import { convertValue, showValue, type ReadRequest, type ReadResult } from './columns.js';
import { overflowsFloat, typeLabel } from './values.js';

/**
 * Reads a Parquet file with hyparquet, one row group at a time and only the declared columns, so
 * memory is the typed columns plus one row group's worth of decoded values. Dates and timestamps
 * arrive as dates, 64-bit integers as BigInt (converted to numbers).
 *
 * Example: `await readParquet({path, display: 'a.parquet', columns: {x: 'number'}, ...})`
 */
export async function readParquet(req: ReadRequest): Promise<ReadResult> {
  const { display } = req;
  const file = await asyncBufferFromFile(req.path);
  let metadata: FileMetaData;
  try {
    metadata = await parquetMetadataAsync(file);
  } catch (e) {
    throw new DendrologError(messages.sourceUnreadable(display, 'Parquet', (e as Error).message), 1);
  }
  const fileColumns = parquetSchema(metadata).children.map((c) => c.element.name);
  const undeclared = fileColumns.filter((c) => !Object.hasOwn(req.columns, c));
  if (undeclared.length > 0 && req.undeclared === 'error') throw new DendrologError(messages.undeclaredColumns(display, undeclared), 1);
  const wanted: [string, ColumnType][] = Object.entries(req.columns);
  if (req.undeclared === 'text') for (const c of undeclared) wanted.push([c, 'string']);
  for (const [name] of wanted) {
    if (!fileColumns.includes(name)) throw new DendrologError(messages.declaredColumnMissing(display, name, fileColumns, closest(name, fileColumns)), 1, name);
  }
  const rows = Number(metadata.num_rows);
  const missing = new Set(req.missing);
  const opts = { decimal: '.' as const, dateFormat: req.dateFormat };
  const out = new Map<string, { type: ColumnType; values: Float64Array | (string | null)[] }>();
  for (const [name, type] of wanted) {
    out.set(name, { type, values: type === 'number' || type === 'date' ? new Float64Array(rows) : new Array<string | null>(rows).fill(null) });
  }
  let failure: DendrologError | null = null;
  let groupStart = 0;
  for (const group of metadata.row_groups) {
    const groupRows = Number(group.num_rows);
    try {
      await parquetRead({
        file,
        metadata,
        columns: wanted.map(([n]) => n),
        rowStart: groupStart,
        rowEnd: groupStart + groupRows,
        onChunk: ({ columnName, columnData, rowStart }) => {
          const target = out.get(columnName);
          if (!target || failure) return;
          const { type, values } = target;
          for (let k = 0; k < columnData.length; k++) {
            const raw = columnData[k];
            const v = convertValue(raw, type, missing, opts);
            if (v === undefined) {
              failure = new DendrologError(
                type === 'number' && overflowsFloat(raw)
                  ? messages.valueNotFinite(`${display}: row ${rowStart + k + 1}`, columnName, showValue(raw))
                  : messages.valueParseAt(display, `row ${rowStart + k + 1}`, columnName, showValue(raw), typeLabel(type, req.dateFormat)),
                1,
                columnName,
              );
              return;
            }
            values[rowStart + k] = v === null ? (values instanceof Float64Array ? NaN : null) : v;
          }
        },
      });
    } catch (e) {
      if (e instanceof DendrologError) throw e;
      throw new DendrologError(messages.sourceUnreadable(display, 'Parquet', (e as Error).message), 1);
    }
    if (failure) throw failure;
    groupStart += groupRows;
    req.progress?.(rows > 0 ? groupStart / rows : 1);
  }
  const columns: Column[] = wanted.map(([name]) => ({ name, ...out.get(name)! }) as Column);
  return { columns, rows, fileColumns, undeclared };
}
