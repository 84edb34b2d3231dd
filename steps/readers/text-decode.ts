import { DendrologError, messages } from '../../core/messages.js';

/** Where a byte sequence stops being text in its encoding: 0-based byte offset, 1-based line, and the byte there. */
export interface UndecodableAt {
  offset: number;
  line: number;
  byte: number;
}

/** Encoding labels offered as suggestions when a recipe names one that does not exist. */
export const COMMON_ENCODINGS = [
  'utf-8',
  'utf-16le',
  'utf-16be',
  'latin1',
  'iso-8859-1',
  'iso-8859-15',
  'windows-1250',
  'windows-1251',
  'windows-1252',
  'macintosh',
  'koi8-r',
  'shift_jis',
  'euc-jp',
  'euc-kr',
  'gb18030',
  'big5',
];

/**
 * The WHATWG name of an encoding label this runtime's TextDecoder decodes, or undefined. Labels
 * are the WHATWG ones, so `latin1` and `iso-8859-1` mean windows-1252 (bytes 0x80–0x9F are € ‚ ƒ …
 * rather than control characters), as browsers read such files. The "replacement" encoding decodes
 * nothing, so it is not offered.
 *
 * Example: `encodingName('Latin1') === 'windows-1252'`; `encodingName('latin-1') === undefined`.
 */
export function encodingName(label: string): string | undefined {
  try {
    const name = new TextDecoder(label).encoding;
    return name === 'replacement' ? undefined : name;
  } catch {
    return undefined;
  }
}

/** How an encoding is named in messages: UTF-8 as people write it, any other as the recipe gives it. */
function shownName(label: string): string {
  return encodingName(label) === 'utf-8' ? 'UTF-8' : label;
}

/** The default failure: a source file's bytes are not text in its (declared or default) encoding. */
function sourceFailure(display: string, label: string): (at: UndecodableAt) => Error {
  const declared = encodingName(label) !== 'utf-8';
  return (at) => {
    // FF FE and FE FF open UTF-16 files (little- and big-endian); no UTF-8 or Latin text starts so
    const utf16 = at.offset === 0 && encodingName(label) === 'utf-8' ? ({ 0xff: 'utf-16le', 0xfe: 'utf-16be' } as const)[at.byte as 0xff | 0xfe] : undefined;
    return new DendrologError(messages.textNotDecodable(display, at.line, at.offset, at.byte, shownName(label), declared, utf16), 1);
  };
}

/** A surrogate, incomplete sequence or multi-byte lead is at most this many bytes before the next chunk. */
const MAX_PENDING = 4;

/**
 * Decodes bytes arriving in chunks of any size, strictly: a byte that is not text in the encoding
 * raises `fail` with its byte offset and line, never a silent U+FFFD. A character split between
 * chunks decodes whole. A leading byte order mark of UTF-8 or UTF-16 is dropped.
 *
 * The TextDecoder does the decoding; it does not say where it failed, so on failure the offending
 * chunk is fed again, byte by byte, to a fresh decoder primed with the bytes still pending from the
 * chunk before, and the first byte of the sequence that could not complete is the one reported.
 *
 * Example: `const d = new StrictTextStream('utf-8', 'a.csv'); d.push(bytes.subarray(0, 3)) + d.push(bytes.subarray(3)) + d.end()`
 */
export class StrictTextStream {
  private readonly decoder: TextDecoder;
  private readonly fail: (at: UndecodableAt) => Error;
  /** Bytes given before the current chunk. */
  private offset = 0;
  /** Line ends decoded before the current chunk. */
  private lines = 0;
  /** The last few bytes given, to recover the decoder's pending state when locating a failure. */
  private tail = new Uint8Array(0);

  constructor(
    private readonly encoding: string,
    display: string,
    fail?: (at: UndecodableAt) => Error,
  ) {
    this.decoder = new TextDecoder(encoding, { fatal: true });
    this.fail = fail ?? sourceFailure(display, encoding);
  }

  /** Decodes one more chunk; returns the text it completes. */
  push(chunk: Uint8Array): string {
    let text: string;
    try {
      text = this.decoder.decode(chunk, { stream: true });
    } catch {
      throw this.fail(this.locate(chunk));
    }
    this.lines += countLineEnds(text);
    this.offset += chunk.length;
    this.keepTail(chunk);
    return text;
  }

  /** Ends the input; a sequence cut off by the end is a failure where it starts. */
  end(): string {
    try {
      return this.decoder.decode();
    } catch {
      throw this.fail(this.locate(new Uint8Array(0), true));
    }
  }

  private keepTail(chunk: Uint8Array): void {
    if (chunk.length >= MAX_PENDING) this.tail = chunk.slice(chunk.length - MAX_PENDING);
    else {
      const joined = new Uint8Array(this.tail.length + chunk.length);
      joined.set(this.tail);
      joined.set(chunk, this.tail.length);
      this.tail = joined.slice(Math.max(0, joined.length - MAX_PENDING));
    }
  }

  /**
   * Finds the failure in `chunk` (or at the end of input). The decoder's pending bytes are the
   * longest end of the tail that decodes to nothing without failing; a fresh decoder fed those, then
   * the chunk byte by byte, fails at the same place, and the bytes since its last output are the
   * sequence that could not complete.
   */
  private locate(chunk: Uint8Array, atEnd = false): UndecodableAt {
    let pending = 0;
    for (let k = this.tail.length; k > 0; k--) {
      const probe = new TextDecoder(this.encoding, { fatal: true, ignoreBOM: true });
      try {
        if (probe.decode(this.tail.subarray(this.tail.length - k), { stream: true }) === '') {
          pending = k;
          break;
        }
      } catch {
        // not a sequence start: try a shorter end
      }
    }
    const bytes = new Uint8Array(pending + chunk.length);
    bytes.set(this.tail.subarray(this.tail.length - pending));
    bytes.set(chunk, pending);
    const base = this.offset - pending;
    const decoder = new TextDecoder(this.encoding, { fatal: true, ignoreBOM: true });
    let lines = this.lines;
    let start = 0;
    const at = (i: number): UndecodableAt => ({ offset: base + i, line: lines + 1, byte: bytes[i] ?? 0 });
    try {
      for (let i = 0; i < bytes.length; i++) {
        const out = decoder.decode(bytes.subarray(i, i + 1), { stream: true });
        if (out.length > 0) {
          lines += countLineEnds(out);
          start = i + 1;
        }
      }
      if (atEnd) decoder.decode();
    } catch {
      return at(start);
    }
    // the byte-wise replay decoded what the chunk-wise decoder refused (an encoding with more state
    // than pending bytes): report the chunk's start rather than a wrong byte
    return at(0);
  }
}

/**
 * Decodes a whole buffer strictly (see StrictTextStream); a failure names the byte offset and line.
 *
 * Example: `decodeStrict(readFileSync(p), 'latin1', 'a.csv')`
 */
export function decodeStrict(bytes: Uint8Array, encoding: string, display: string, fail?: (at: UndecodableAt) => Error): string {
  const d = new StrictTextStream(encoding, display, fail);
  return d.push(bytes) + d.end();
}

function countLineEnds(text: string): number {
  let n = 0;
  for (let i = text.indexOf('\n'); i >= 0; i = text.indexOf('\n', i + 1)) n++;
  return n;
}
