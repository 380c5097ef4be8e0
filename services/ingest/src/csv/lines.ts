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

export type Line =
  | { readonly kind: 'text'; readonly line: number; readonly text: string }
  | {
      readonly kind: 'invalid-utf8';
      readonly line: number /** Lossy decoding, for the report. */;
      readonly text: string;
    }
  | {
      readonly kind: 'too-long';
      readonly line: number /** Length in bytes. */;
      readonly bytes: number /** The first bytes, decoded lossily. */;
      readonly head: string;
    };

const decoder = new TextDecoder('utf-8', { fatal: true });
const lossy = new TextDecoder('utf-8');

function decodeLine(bytes: Buffer, line: number): Line {
  let end = bytes.length;
  if (end > 0 && bytes[end - 1] === 0x0d) end--;
  const body = bytes.subarray(0, end);
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
 * Yields the lines of a byte stream. maxLineBytes bounds the memory held for one line:
 * a longer line is reported as 'too-long' with its first bytes and skipped to its end.
 */
export async function* readLines(input: Readable, maxLineBytes: number): AsyncGenerator<Line> {
  let carry: Buffer[] = [];
  let carryBytes = 0;
  let skipping = false;
  let skippedBytes = 0;
  let head = '';
  let line = 0;
  let first = true;
  for await (const chunk of input as AsyncIterable<Buffer | string>) {
    let buf = typeof chunk === 'string' ? Buffer.from(chunk) : chunk;
    if (first) {
      first = false;
      if (buf.length >= 3 && buf.subarray(0, 3).equals(BOM)) buf = buf.subarray(3);
    }
    let pos = 0;
    while (pos < buf.length) {
      const nl = buf.indexOf(0x0a, pos);
      const end = nl === -1 ? buf.length : nl;
      const piece = buf.subarray(pos, end);
      if (skipping) {
        skippedBytes += piece.length;
      } else if (carryBytes + piece.length > maxLineBytes) {
        skipping = true;
        const joined = Buffer.concat([...carry, piece]);
        head = lossy.decode(joined.subarray(0, 200));
        skippedBytes = joined.length;
        carry = [];
        carryBytes = 0;
      } else if (piece.length > 0) {
        // Copy: the chunk's memory is reused by the stream after this iteration.
        carry.push(nl === -1 ? Buffer.from(piece) : piece);
        carryBytes += piece.length;
      }
      if (nl === -1) break;
      line++;
      if (skipping) {
        yield { kind: 'too-long', line, bytes: skippedBytes, head };
        skipping = false;
        skippedBytes = 0;
      } else {
        const bytes = carry.length === 1 ? carry[0]! : Buffer.concat(carry);
        yield decodeLine(bytes, line);
      }
      carry = [];
      carryBytes = 0;
      pos = nl + 1;
    }
  }
  if (skipping) {
    yield { kind: 'too-long', line: line + 1, bytes: skippedBytes, head };
  } else if (carryBytes > 0) {
    yield decodeLine(Buffer.concat(carry), line + 1);
  }
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
