import type { Frame } from '../core/frame.js';
import { DendrologError, messages } from '../core/messages.js';
import type { SourceFormat, SourceSpec } from '../core/recipe-types.js';
import type { FrameOutput, StepDefinition } from '../core/step-types.js';
import { readArrow } from './readers/arrow.js';
import type { Reader, ReadRequest } from './readers/columns.js';
import { readDelimited } from './readers/delimited.js';
import { readJson } from './readers/json.js';
import { readNetcdf } from './readers/netcdf.js';
import { readParquet } from './readers/parquet.js';
import { tableSha256 } from './readers/table-hash.js';
import { profileFrame } from './profile.js';
import { table } from '../core/dict.js';

/**
 * The source step's params: the recipe's read options (SourceSpec) with the file's SHA-256 in place
 * of its path and pin. The options past the four required ones are optional so a step planned with
 * only those (as tests do) reads with their defaults (readDefaults).
 */
export type SourceParams = Pick<SourceSpec, 'format' | 'columns' | 'missing'> &
  Partial<Omit<SourceSpec, 'file' | 'sha256' | 'format' | 'columns' | 'missing'>> & {
    /** SHA-256 of the file's bytes: the file's identity in the key, so moving it re-runs nothing. */
    sha256: string;
  };

/** One reader per format; adding a format is one reader file and one line here. */
export const READERS: Record<SourceFormat, Reader> = table({
  csv: readDelimited,
  tsv: readDelimited,
  json: readJson,
  parquet: readParquet,
  arrow: readArrow,
  netcdf: readNetcdf,
});

/**
 * Each read option's default for a format, the one place they are written: the recipe's
 * normalization writes them out, and the reader falls back on them. Options a format does not
 * have are undefined.
 *
 * Example: `readDefaults('tsv').delimiter === '\t'`, `readDefaults('parquet').encoding === undefined`
 */
export function readDefaults(format: SourceFormat) {
  const text = format === 'csv' || format === 'tsv';
  return {
    undeclared: 'ignore' as const,
    date_format: 'YYYY-MM-DD' as const,
    encoding: text || format === 'json' ? 'utf-8' : undefined,
    delimiter: text ? (format === 'tsv' ? '\t' : ',') : undefined,
    decimal: text ? ('.' as const) : undefined,
    header: text ? true : undefined,
  };
}

/** The reader's request for a step's params and file, with each option's default filled in. */
export function readRequest(params: SourceParams, path: string, display: string): ReadRequest {
  const d = readDefaults(params.format);
  return {
    path,
    display,
    columns: params.columns,
    missing: params.missing,
    undeclared: params.undeclared ?? d.undeclared,
    dateFormat: params.date_format ?? d.date_format,
    // readers of formats without these options never look at them
    encoding: params.encoding ?? d.encoding ?? 'utf-8',
    delimiter: params.delimiter ?? d.delimiter ?? ',',
    decimal: params.decimal ?? d.decimal ?? '.',
    header: params.header ?? d.header ?? true,
    variables: params.variables ?? null,
    select: params.select ?? {},
  };
}

/**
 * Reads a source file into typed columns with the reader of its format. Declared columns are read
 * as their declared type, never guessed; a value that does not parse stops the run naming file,
 * line (or row) and column. The parsed table's SHA-256 (of its encoded frame) goes into the notes.
 */
export const source: StepDefinition<SourceParams, FrameOutput> = {
  kind: 'source',
  // 3: text decoded strictly (declared encodings), impossible dates refused, a table without rows refused,
  // numbers beyond the float64 range (1e309) refused
  version: 3,
  codec: 'frame',
  async run(_inputs, params, ctx) {
    const req = readRequest(params, ctx.locator.path, ctx.locator.display);
    req.progress = (f) => ctx.progress(f);
    const read = await READERS[params.format](req);
    if (read.rows === 0) {
      const selected = params.format === 'netcdf' && Object.keys(req.select).length > 0;
      throw new DendrologError(messages.sourceNoRows(ctx.locator.display, selected ? 'no rows are left after "select"' : 'the file holds no rows'), 1);
    }
    const frame: Frame = { rows: read.rows, columns: read.columns };
    const declared = Object.keys(params.columns).length;
    const extraText = read.columns.length - declared;
    const detail =
      `read ${read.rows} rows and ${declared} declared columns of ${read.fileColumns.length} in the file` +
      (extraText > 0 ? `, plus ${extraText} undeclared as text` : '') +
      (read.detail ? ` (${read.detail})` : '');
    const extra: Record<string, unknown> = {
      profile: profileFrame(frame),
      fileColumns: read.fileColumns.length,
      format: params.format,
      tableSha256: tableSha256(frame),
    };
    if (read.undeclared.length > 0) extra.undeclared = read.undeclared;
    if (read.units && Object.keys(read.units).length > 0) extra.units = read.units;
    return { frame, notes: { rowsIn: read.rows, rowsOut: read.rows, detail, extra } };
  },
  summary: (o) => `${o.frame.rows.toLocaleString('en')} rows`,
};
