import { statSync } from 'node:fs';
import { DendrologError, messages } from '../../core/messages.js';
import type { ColumnType } from '../../core/recipe-types.js';
import { closest } from '../../core/suggest.js';
import { columnSink, type ColumnSink, type ReadRequest, type ReadResult } from './columns.js';
import { streamDelimitedFile } from './csv-stream.js';
import { overflowsFloat, parseValue, typeLabel } from './values.js';

/** Thrown by the row callback to stop reading once `maxRows` rows are in. */
const ENOUGH = Symbol('enough rows');

/**
 * Reads a delimited text file (csv, tsv) by streaming it in chunks and parsing each record straight
 * into typed columns, so memory is the columns plus one chunk, whatever the file's size. Declared
 * columns are never guessed: each value parses as its declared type or is a missing token, else the
 * run stops naming file, line and column.
 *
 * Example: `readDelimited({path, display: 'a.csv', columns: {id: 'string'}, delimiter: ',', header: true, ...})`
 */
export function readDelimited(req: ReadRequest): ReadResult {
  const { display } = req;
  const missing = new Set(req.missing);
  const opts = { decimal: req.decimal, dateFormat: req.dateFormat };
  const declared = Object.entries(req.columns);
  let sinks: { at: number; sink: ColumnSink; label: string }[] = [];
  let fileColumns: string[] = [];
  let undeclared: string[] = [];
  let width = -1;
  let rows = 0;
  let reserved = false;
  const total = statSync(req.path).size;

  const setColumns = (header: string[]) => {
    fileColumns = header;
    width = header.length;
    const seen = new Set<string>();
    for (const h of header) {
      if (seen.has(h)) throw new DendrologError(messages.csvDuplicateHeader(display, h), 1);
      seen.add(h);
    }
    sinks = declared.map(([name, type]) => {
      const at = header.indexOf(name);
      if (at < 0) throw new DendrologError(messages.columnNotInFile(display, name, header, closest(name, header)), 1, name);
      return { at, sink: columnSink(name, type), label: typeLabel(type, req.dateFormat, req.decimal) };
    });
    undeclared = header.filter((h) => !Object.hasOwn(req.columns, h));
    if (undeclared.length > 0 && req.undeclared === 'error') throw new DendrologError(messages.undeclaredColumns(display, undeclared), 1);
    if (req.undeclared === 'text') {
      for (const h of undeclared) sinks.push({ at: header.indexOf(h), sink: columnSink(h, 'string'), label: 'string' });
    }
  };
  if (!req.header) {
    setColumns(declared.map(([name]) => name));
    undeclared = [];
  }

  try {
    streamDelimitedFile(
      req.path,
      req.delimiter,
      display,
      (fields, line) => {
        if (width < 0) {
          setColumns(fields.map((h) => h.trim()));
          return;
        }
        if (req.maxRows !== undefined && rows >= req.maxRows) throw ENOUGH;
        if (fields.length !== width) {
          throw new DendrologError(
            req.header ? messages.csvFieldCount(display, line, width, fields.length) : messages.csvFieldCountNoHeader(display, line, width, fields.length),
            1,
          );
        }
        for (let k = 0; k < sinks.length; k++) {
          const s = sinks[k];
          const raw = fields[s.at];
          const v = parseValue(raw, s.sink.type as ColumnType, missing, opts);
          if (v === undefined) {
            if (s.sink.type === 'number' && overflowsFloat(raw, req.decimal)) throw new DendrologError(messages.valueNotFinite(`${display}:${line}`, s.sink.name, raw), 1, s.sink.name);
            throw new DendrologError(messages.valueParse(display, line, s.sink.name, raw, s.label), 1, s.sink.name);
          }
          s.sink.add(v);
        }
        rows++;
      },
      {
        chunkBytes: req.chunkBytes,
        encoding: req.encoding,
        onChunk: (done) => {
          // after the first chunk, size the columns for the whole file so they are not regrown repeatedly
          if (!reserved && rows > 0) {
            reserved = true;
            // check reads only maxRows rows: no need to make room for the whole file
          const estimate = Math.min(Math.ceil(((rows * total) / Math.max(1, done)) * 1.02) + 16, req.maxRows ?? Infinity);
            for (const s of sinks) s.sink.reserve(estimate);
          }
          req.progress?.(total > 0 ? done / total : 1);
        },
      },
    );
  } catch (e) {
    if (e !== ENOUGH) throw e;
  }
  if (width < 0) throw new DendrologError(messages.csvEmpty(display), 1);
  // said here, by the reader that knows why, rather than by whichever later step first needs a row
  if (rows === 0) throw new DendrologError(messages.sourceNoRows(display, req.header ? 'the file has a header row but no data rows' : 'the file has no data rows'), 1);
  return {
    columns: sinks.map((s) => s.sink.finish()),
    rows,
    fileColumns,
    undeclared,
  };
}
