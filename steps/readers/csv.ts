import { messages, DendrologError } from '../../core/messages.js';

/** One parsed record with the 1-based line of the file where it starts. */
export interface CsvRecord {
  line: number;
  fields: string[];
}

/**
 * Parses delimited text (RFC 4180 quoting, CRLF or LF, optional BOM) into a header and records,
 * each record carrying the line it starts on so errors can name it.
 *
 * Example: `parseDelimited('a,b\n1,2\n', ',', 'x.csv').records[0]` is `{line: 2, fields: ['1', '2']}`.
 */
export function parseDelimited(text: string, delimiter: string, file: string): { header: string[]; records: CsvRecord[] } {
  const records: CsvRecord[] = [];
  let i = text.charCodeAt(0) === 0xfeff ? 1 : 0;
  const n = text.length;
  const delim = delimiter.charCodeAt(0);
  let line = 1;
  while (i < n) {
    const startLine = line;
    const fields: string[] = [];
    for (;;) {
      let value = '';
      if (text.charCodeAt(i) === 34) {
        // quoted field: runs to the matching quote; "" is a literal quote
        i++;
        let start = i;
        for (;;) {
          if (i >= n) throw new DendrologError(messages.csvUnterminatedQuote(file, startLine), 1);
          const c = text.charCodeAt(i);
          if (c === 34) {
            if (text.charCodeAt(i + 1) === 34) {
              value += text.slice(start, i + 1);
              i += 2;
              start = i;
              continue;
            }
            value += text.slice(start, i);
            i++;
            break;
          }
          if (c === 10) line++;
          i++;
        }
        // anything between the closing quote and the delimiter is kept, as spreadsheets do
        const rest = i;
        while (i < n && text.charCodeAt(i) !== delim && text.charCodeAt(i) !== 10 && text.charCodeAt(i) !== 13) i++;
        value += text.slice(rest, i);
      } else {
        const start = i;
        while (i < n && text.charCodeAt(i) !== delim && text.charCodeAt(i) !== 10 && text.charCodeAt(i) !== 13) i++;
        value = text.slice(start, i);
      }
      fields.push(value);
      if (i < n && text.charCodeAt(i) === delim) {
        i++;
        continue;
      }
      break;
    }
    if (text.charCodeAt(i) === 13) i++;
    if (text.charCodeAt(i) === 10) i++;
    line++;
    // a blank line is not a record
    if (fields.length === 1 && fields[0] === '') continue;
    records.push({ line: startLine, fields });
  }
  if (records.length === 0) throw new DendrologError(messages.csvEmpty(file), 1);
  const header = records.shift()!.fields.map((h) => h.trim());
  const seen = new Set<string>();
  for (const h of header) {
    if (seen.has(h)) throw new DendrologError(messages.csvDuplicateHeader(file, h), 1);
    seen.add(h);
  }
  for (const r of records) {
    if (r.fields.length !== header.length) {
      throw new DendrologError(messages.csvFieldCount(file, r.line, header.length, r.fields.length), 1);
    }
  }
  return { header, records };
}

/** The header row alone, for checks that must not read the whole file. */
export function readHeaderLine(text: string, delimiter: string, file: string): string[] {
  const end = text.search(/\r?\n/);
  const first = end < 0 ? text : text.slice(0, end);
  if (first.includes('"')) return parseDelimited(text, delimiter, file).header;
  return parseDelimited(first + '\n', delimiter, file).header;
}
