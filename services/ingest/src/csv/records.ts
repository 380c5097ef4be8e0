/**
 * Cutting a CSV file into records: one record per line (lines.ts), blank lines skipped, lines
 * that cannot be a record (invalid UTF-8, over-long, broken quoting, wrong field count, a last
 * line that may still be being written) quarantined by line.
 */
import type { Readable } from 'node:stream';
import type { CsvFormat } from './format.js';
import { type Line, readLines, splitCsvLine } from './lines.js';
import type { CsvOutput } from './output.js';

export type TextLine = Line & { kind: 'text' };

export class RecordReader {
  private readonly lines: AsyncGenerator<Line>;

  constructor(
    input: Readable,
    private readonly format: CsvFormat,
    private readonly out: CsvOutput,
  ) {
    this.lines = readLines(input, format.maxLineBytes);
  }

  /** The next line that is not blank, whatever its kind, or undefined at the end. */
  async nextLine(): Promise<Line | undefined> {
    for (;;) {
      const item = await this.lines.next();
      if (item.done === true) return undefined;
      const l = item.value;
      if (l.kind === 'text' && l.text.trim() === '') continue;
      return l;
    }
  }

  /**
   * The next data line as text; a line that cannot be one is quarantined and counted as a row.
   * lastLineMayBeCut: a last line without a line end is quarantined as incomplete (the writer
   * may not have finished it: "90" of "90.4").
   */
  async nextDataLine(lastLineMayBeCut: boolean): Promise<TextLine | undefined> {
    for (let l = await this.nextLine(); l !== undefined; l = await this.nextLine()) {
      this.out.summary.rows++;
      if (l.unterminated === true && lastLineMayBeCut) {
        const raw = l.kind === 'too-long' ? l.head : l.text;
        const reason = 'the last line has no line end and the file may still be being written; not stored';
        await this.out.reject(l.line, null, 'incomplete-line', reason, raw);
        return undefined;
      }
      if (l.kind === 'text') return l;
      if (l.kind === 'invalid-utf8') {
        const reason = 'the line holds bytes that are not UTF-8';
        await this.out.reject(l.line, null, 'invalid-utf8', reason, l.text);
      } else {
        const reason = `${l.bytes} bytes, more than the ${this.format.maxLineBytes} allowed`;
        await this.out.reject(l.line, null, 'line-too-long', reason, l.head);
      }
    }
    return undefined;
  }

  /** The fields of a data line when it splits into the header's width, else quarantined. */
  async fields(l: TextLine, names: readonly string[]): Promise<string[] | undefined> {
    const split = splitCsvLine(l.text, this.format.delimiter);
    if (!split.ok) {
      const column = names[split.column - 1] ?? null;
      await this.out.reject(l.line, column, 'csv-syntax', split.problem, l.text);
      return undefined;
    }
    if (split.fields.length !== names.length) {
      const reason = `${split.fields.length} fields, the header has ${names.length}`;
      await this.out.reject(l.line, null, 'column-count', reason, l.text);
      return undefined;
    }
    return split.fields;
  }
}
