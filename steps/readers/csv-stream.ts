import { closeSync, fstatSync, openSync, readSync } from 'node:fs';
import { DendrologError, messages } from '../../core/messages.js';
import { StrictTextStream } from './text-decode.js';

/** Receives each record with the 1-based line of the file where it starts. Blank lines are not records. */
export type RecordSink = (fields: string[], line: number) => void;

const QUOTE = 34;
const LF = 10;
const CR = 13;

/**
 * An incremental RFC 4180 parser: text goes in by chunks of any size (a chunk may end inside a
 * quoted field, between the two quotes of an escaped quote, or between CR and LF), records come out
 * through `sink` with the line they start on. Its results equal `parseDelimited` on the whole text:
 * a quoted field runs to its closing quote (`""` is a literal quote, newlines are data), anything
 * between the closing quote and the next delimiter is kept, CR, LF and CRLF end a record, and a
 * blank line is skipped.
 *
 * Example: `const p = new DelimitedStream(',', 'x.csv', (f, line) => rows.push(f)); p.push('a,"b'); p.push('"\n'); p.end();`
 * gives one record `['a', 'b']` starting on line 1.
 */
export class DelimitedStream {
  private readonly delim: number;
  private fields: string[] = [];
  /** Text of the current field gathered from earlier chunks. */
  private partial = '';
  /** At the start of a field: no character of it read yet (a quote here opens a quoted field). */
  private fresh = true;
  private quoted = false;
  /** Inside a quoted field, a quote was the last character of the previous chunk. */
  private quotePending = false;
  /** The previous chunk ended with CR: a leading LF belongs to that line end. */
  private crPending = false;
  private atStart = true;
  private line = 1;
  private recordLine = 1;

  constructor(
    delimiter: string,
    private readonly file: string,
    private readonly sink: RecordSink,
  ) {
    this.delim = delimiter.charCodeAt(0);
  }

  /** Parses one more chunk of text. */
  push(text: string): void {
    let i = 0;
    const n = text.length;
    if (this.atStart && n > 0) {
      this.atStart = false;
      if (text.charCodeAt(0) === 0xfeff) i = 1;
    }
    if (this.crPending && i < n) {
      this.crPending = false;
      if (text.charCodeAt(i) === LF) i++;
    }
    const delim = this.delim;
    while (i < n) {
      if (this.quoted) {
        if (this.quotePending) {
          // the quote that ended the last chunk: doubled means a literal quote, else it closed the field
          this.quotePending = false;
          if (text.charCodeAt(i) === QUOTE) {
            this.partial += '"';
            i++;
          } else this.quoted = false;
          continue;
        }
        const start = i;
        while (i < n) {
          const c = text.charCodeAt(i);
          if (c === QUOTE) break;
          if (c === LF) this.line++;
          i++;
        }
        this.partial += text.slice(start, i);
        if (i >= n) break;
        i++;
        if (i >= n) this.quotePending = true;
        else if (text.charCodeAt(i) === QUOTE) {
          this.partial += '"';
          i++;
        } else this.quoted = false;
        continue;
      }
      if (this.fresh) {
        this.fresh = false;
        if (text.charCodeAt(i) === QUOTE) {
          this.quoted = true;
          i++;
          continue;
        }
      }
      // unquoted text, or what follows a closing quote (kept, as spreadsheets do), runs to a delimiter or line end
      const start = i;
      let c = 0;
      while (i < n) {
        c = text.charCodeAt(i);
        if (c === delim || c === LF || c === CR) break;
        i++;
      }
      if (i >= n) {
        this.partial += text.slice(start, i);
        break;
      }
      this.fields.push(this.partial.length > 0 ? this.partial + text.slice(start, i) : text.slice(start, i));
      this.partial = '';
      this.fresh = true;
      i++;
      if (c === delim) continue;
      if (c === CR) {
        if (i >= n) this.crPending = true;
        else if (text.charCodeAt(i) === LF) i++;
      }
      this.endRecord();
    }
  }

  /** Finishes the text: emits a last record without a line end, or stops at an unclosed quote. */
  end(): void {
    if (this.quoted && !this.quotePending) throw new DendrologError(messages.csvUnterminatedQuote(this.file, this.recordLine), 1);
    this.quoted = false;
    this.quotePending = false;
    if (!this.fresh || this.fields.length > 0) {
      this.fields.push(this.partial);
      this.partial = '';
      this.fresh = true;
      this.endRecord();
    }
  }

  private endRecord(): void {
    const fields = this.fields;
    this.fields = [];
    const line = this.recordLine;
    this.line++;
    this.recordLine = this.line;
    if (fields.length === 1 && fields[0] === '') return;
    this.sink(fields, line);
  }
}

/** Default bytes read at a time: large enough for throughput, small beside any table. */
export const CHUNK_BYTES = 1 << 20;

/**
 * Streams a file through a DelimitedStream in chunks of `chunkBytes`, decoding its encoding (UTF-8
 * unless given) strictly and across chunk boundaries, so no single string ever holds the file and a
 * byte that is not text stops the read naming its line and byte offset. Calls `onChunk` with the
 * bytes read so far.
 *
 * Example: `streamDelimitedFile('a.csv', ',', 'a.csv', (f, line) => ...)`
 */
export function streamDelimitedFile(
  path: string,
  delimiter: string,
  display: string,
  sink: RecordSink,
  opts: { chunkBytes?: number; encoding?: string; onChunk?: (bytesRead: number, totalBytes: number) => void } = {},
): void {
  const parser = new DelimitedStream(delimiter, display, sink);
  const fd = openSync(path, 'r');
  try {
    const total = fstatSync(fd).size;
    const buf = Buffer.allocUnsafe(Math.max(4, opts.chunkBytes ?? CHUNK_BYTES));
    const decoder = new StrictTextStream(opts.encoding ?? 'utf-8', display);
    let done = 0;
    for (;;) {
      const got = readSync(fd, buf, 0, buf.length, null);
      if (got === 0) break;
      done += got;
      parser.push(decoder.push(buf.subarray(0, got)));
      opts.onChunk?.(done, total);
    }
    parser.push(decoder.end());
    parser.end();
  } finally {
    closeSync(fd);
  }
}
