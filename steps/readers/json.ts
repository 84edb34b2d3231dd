import { readFileSync } from 'node:fs';
import { DendrologError, messages } from '../../core/messages.js';
import { closest } from '../../core/suggest.js';
import { columnSink, convertValue, showValue, type ReadRequest, type ReadResult } from './columns.js';
import { decodeStrict } from './text-decode.js';
import { overflowsFloat, typeLabel } from './values.js';

/**
 * Reads a JSON file holding an array of records (`[{"a": 1}, ...]`) or an object of columns
 * (`{"a": [1, 2]}`). A column is in the file when any record has the key; a record lacking a
 * declared key has it missing. Values convert to their declared type (text parses as in CSV; a
 * number in a string column becomes its text; a number is never read as a date).
 *
 * Example: `readJson({path, display: 'a.json', columns: {id: 'string'}, ...}).columns[0].values`
 */
export function readJson(req: ReadRequest): ReadResult {
  const { display } = req;
  let doc: unknown;
  // decoded before parsing, so a stray byte is named by line and offset rather than silently replaced
  const text = decodeStrict(readFileSync(req.path), req.encoding, display);
  try {
    doc = JSON.parse(text);
  } catch (e) {
    throw new DendrologError(messages.sourceUnreadable(display, 'JSON', (e as Error).message), 1);
  }
  let get: (name: string) => ((row: number) => unknown) | null;
  let rows: number;
  let fileColumns: string[];
  let where: (row: number) => string;
  if (Array.isArray(doc)) {
    const records = doc;
    if (records.length === 0) throw new DendrologError(messages.sourceNoRows(display, 'the file holds an empty array'), 1);
    const keys = new Set<string>();
    records.forEach((r, i) => {
      if (r === null || typeof r !== 'object' || Array.isArray(r)) {
        throw new DendrologError(messages.jsonShape(display, `element ${i + 1} of the array is ${showValue(r)}, not a record`), 1);
      }
      for (const k of Object.keys(r)) keys.add(k);
    });
    fileColumns = [...keys];
    rows = records.length;
    // a record lacking the key has it missing; never read a name through the record's prototype
    get = (name) => (keys.has(name) ? (i) => (Object.hasOwn(records[i], name) ? (records[i] as Record<string, unknown>)[name] : undefined) : null);
    where = (i) => `record ${i + 1}`;
  } else if (doc !== null && typeof doc === 'object') {
    const cols = doc as Record<string, unknown>;
    fileColumns = Object.keys(cols);
    rows = -1;
    for (const [k, v] of Object.entries(cols)) {
      if (!Array.isArray(v)) throw new DendrologError(messages.jsonShape(display, `"${k}" is not an array`), 1);
      if (rows >= 0 && v.length !== rows) throw new DendrologError(messages.jsonShape(display, `column "${k}" has ${v.length} values, but the columns before it have ${rows}`), 1);
      rows = v.length;
    }
    if (rows <= 0) throw new DendrologError(messages.sourceNoRows(display, fileColumns.length === 0 ? 'the file holds an empty object' : 'the file\'s columns hold no values'), 1);
    get = (name) => (Object.hasOwn(cols, name) && Array.isArray(cols[name]) ? (i) => (cols[name] as unknown[])[i] : null);
    where = (i) => `value ${i + 1} of the column`;
  } else {
    throw new DendrologError(messages.jsonShape(display, `the file holds ${showValue(doc)}`), 1);
  }
  return buildColumns(req, rows, fileColumns, get, where);
}

/**
 * Shared by the in-memory readers (JSON, Arrow): checks declared against file columns, then converts
 * each declared column. `get(name)` returns a row accessor, or null when the file lacks the column.
 */
export function buildColumns(
  req: ReadRequest,
  rows: number,
  fileColumns: string[],
  get: (name: string) => ((row: number) => unknown) | null,
  where: (row: number) => string,
): ReadResult {
  const { display } = req;
  // check reads the first rows only
  rows = req.maxRows === undefined ? rows : Math.min(rows, req.maxRows);
  const missing = new Set(req.missing);
  const opts = { decimal: '.' as const, dateFormat: req.dateFormat };
  const undeclared = fileColumns.filter((c) => !Object.hasOwn(req.columns, c));
  if (undeclared.length > 0 && req.undeclared === 'error') throw new DendrologError(messages.undeclaredColumns(display, undeclared), 1);
  const wanted = Object.entries(req.columns);
  if (req.undeclared === 'text') for (const c of undeclared) wanted.push([c, 'string']);
  const columns = wanted.map(([name, type]) => {
    const at = get(name);
    if (!at) throw new DendrologError(messages.declaredColumnMissing(display, name, fileColumns, closest(name, fileColumns)), 1, name);
    const sink = columnSink(name, type);
    sink.reserve(rows);
    for (let i = 0; i < rows; i++) {
      const raw = at(i);
      const v = convertValue(raw, type, missing, opts);
      if (v === undefined && type === 'number' && overflowsFloat(raw)) throw new DendrologError(messages.valueNotFinite(`${display}: ${where(i)}`, name, showValue(raw)), 1, name);
      if (v === undefined) throw new DendrologError(messages.valueParseAt(display, where(i), name, showValue(raw), typeLabel(type, req.dateFormat)), 1, name);
      sink.add(v);
    }
    return sink.finish();
  });
  return { columns, rows, fileColumns, undeclared };
}
