/**
 * A streaming line reader for CSV files: bytes in, one line at a time out, with its line
 * number, its bytes decoded strictly as UTF-8 (a line with invalid bytes is reported as
 * such, never silently repaired), and over-long lines cut off without buffering them.
 *
 * Why not csv-parse's own record splitting: measured with csv-parse 7 and
 * skip_records_with_error, a broken quote swallows the lines after it and an over-long
 * record is reported once per extra byte. Plant CSV files hold one record per line, so
 * records are split at line ends here, and the fields of a line with quotes by csv-parse (splitCsvLine below); a quote left open
 * at the end of a line is a syntax error of that line only.
 */

import type { Readable } from 'node:stream';
import { CsvError, parse as parseCsv } from 'csv-parse/sync';

/** A last line without a line end (LF, CR or CRLF) carries unterminated: true; no other line has it. */
interface LineEnd {
  readonly unterminated?: true;
}

export type Line =
  | ({ readonly kind: 'text'; readonly line: number; readonly text: string } & LineEnd)
  | ({
      readonly kind: 'invalid-utf8';
      readonly line: number /** Lossy decoding, for the report. */;
      readonly text: string;
    } & LineEnd)
  | ({
      readonly kind: 'too-long';
      readonly line: number /** Length in bytes. */;
      readonly bytes: number /** The first bytes, decoded lossily. */;
      readonly head: string;
    } & LineEnd);

const LF = 0x0a;
const CR = 0x0d;
const decoder = new TextDecoder('utf-8', { fatal: true });
const lossy = new TextDecoder('utf-8');

function decodeLine(body: Buffer, line: number): Line {
  // ASCII-only lines (the common case) decode without the strict decoder.
  let ascii = true;
  for (let i = 0; i < body.length; i++) {
    if (body[i]! > 0x7f) {
      ascii = false;
      break;
    }
  }
  if (ascii) return { kind: 'text', line, text: body.toString('latin1') };
  try {
    return { kind: 'text', line, text: decoder.decode(body) };
  } catch {
    return { kind: 'invalid-utf8', line, text: lossy.decode(body) };
  }
}

/** Bytes the start of a file may hold before the first line: the UTF-8 byte order mark. */
const BOM = Buffer.from([0xef, 0xbb, 0xbf]);

/**
 * The bytes of the line being read, gathered over chunks. maxLineBytes bounds what is held:
 * a longer line keeps only its first 200 bytes (for the report) and its length.
 */
class LineBuffer {
  private carry: Buffer[] = [];
  private carryBytes = 0;
  private skipping = false;
  private skippedBytes = 0;
  private head = '';
  line = 0;

  constructor(private readonly maxLineBytes: number) {}

  /** Adds a piece of the current line; copy when the chunk's memory is reused after this turn. */
  add(piece: Buffer, copy: boolean): void {
    if (this.skipping) {
      this.skippedBytes += piece.length;
    } else if (this.carryBytes + piece.length > this.maxLineBytes) {
      this.skipping = true;
      const joined = Buffer.concat([...this.carry, piece]);
      this.head = lossy.decode(joined.subarray(0, 200));
      this.skippedBytes = joined.length;
      this.carry = [];
      this.carryBytes = 0;
    } else if (piece.length > 0) {
      this.carry.push(copy ? Buffer.from(piece) : piece);
      this.carryBytes += piece.length;
    }
  }

  get empty(): boolean {
    return !this.skipping && this.carryBytes === 0;
  }

  /** Ends the current line. */
  take(): Line {
    this.line++;
    let out: Line;
    if (this.skipping) {
      out = { kind: 'too-long', line: this.line, bytes: this.skippedBytes, head: this.head };
      this.skipping = false;
      this.skippedBytes = 0;
    } else {
      out = decodeLine(this.carry.length === 1 ? this.carry[0]! : Buffer.concat(this.carry), this.line);
    }
    this.carry = [];
    this.carryBytes = 0;
    return out;
  }
}

/**
 * Yields the lines of a byte stream. A line ends at LF, CRLF or a lone CR (files from old Mac
 * software and some data loggers), in any mix. maxLineBytes bounds the memory held for one
 * line: a longer line is reported as 'too-long' with its first bytes and skipped to its end.
 */
export async function* readLines(input: Readable, maxLineBytes: number): AsyncGenerator<Line> {
  const buffer = new LineBuffer(maxLineBytes);
  let first = true;
  // A CR ended the previous chunk: an LF opening this one belongs to the same line end.
  let crPending = false;
  for await (const chunk of input as AsyncIterable<Buffer | string>) {
    let buf = typeof chunk === 'string' ? Buffer.from(chunk) : chunk;
    if (first) {
      first = false;
      if (buf.length >= 3 && buf.subarray(0, 3).equals(BOM)) buf = buf.subarray(3);
    }
    if (buf.length === 0) continue;
    let pos = crPending && buf[0] === LF ? 1 : 0;
    crPending = false;
    // Next LF and CR at or after pos; each is searched again only once passed (one scan per byte kind).
    let lf = -2;
    let cr = -2;
    while (pos < buf.length) {
      if (lf !== -1 && lf < pos) lf = buf.indexOf(LF, pos);
      if (cr !== -1 && cr < pos) cr = buf.indexOf(CR, pos);
      const end = cr === -1 || (lf !== -1 && lf < cr) ? lf : cr;
      if (end === -1) {
        buffer.add(buf.subarray(pos), true);
        break;
      }
      buffer.add(buf.subarray(pos, end), false);
      yield buffer.take();
      pos = end + 1;
      if (end === cr) {
        if (pos === buf.length) crPending = true;
        else if (buf[pos] === LF) pos++;
      }
    }
  }
  if (!buffer.empty) yield { ...buffer.take(), unterminated: true };
}

export type SplitResult =
  | { readonly ok: true; readonly fields: string[] }
  | { readonly ok: false; readonly problem: string; readonly column: number };

/** Our words for csv-parse's quoting errors (the quarantine reason a user reads). */
const QUOTE_PROBLEMS: Readonly<Record<string, string>> = {
  CSV_QUOTE_NOT_CLOSED: 'a quoted field is not closed before the end of the line',
  CSV_INVALID_CLOSING_QUOTE: 'unexpected text after a closing quote',
  INVALID_OPENING_QUOTE: 'a quote inside an unquoted field',
};

/**
 * Splits one CSV line into fields (RFC 4180 quoting: a field in double quotes may hold the
 * delimiter and doubled quotes), fields trimmed of spaces. A line with quotes goes through
 * csv-parse; one line is one record here (records are cut at line ends by readLines, so a broken
 * quote costs only its own line).
 */
export function splitCsvLine(text: string, delimiter: string): SplitResult {
  if (!text.includes('"')) return { ok: true, fields: text.split(delimiter).map((f) => f.trim()) };
  try {
    const records = parseCsv(text, { delimiter, trim: true, relax_column_count: true }) as string[][];
    return { ok: true, fields: records[0] ?? [] };
  } catch (error) {
    if (error instanceof CsvError) {
      const column = typeof error.column === 'number' ? error.column + 1 : 1;
      return { ok: false, problem: QUOTE_PROBLEMS[error.code] ?? error.message, column };
    }
    throw error;
  }
}
