/**
 * Header and format detection of a CSV file: the header line read and checked (encoding,
 * quoting), then its columns mapped to tags: a wide file's time column and one column per tag
 * (unknown names reported once per file, repeated tags and unit mismatches once per column),
 * or a long file's tag / time / value / quality columns. A header that cannot be used rejects
 * the file (INGEST_FILE_UNREADABLE).
 */
import { IngestError } from '../errors.js';
import type { TagInfo, TagLookup } from '../types.js';
import { sameUnit } from './fields.js';
import type { CsvFormat } from './format.js';
import { splitCsvLine } from './lines.js';
import { type CsvOutput, clip } from './output.js';
import type { RecordReader, TextLine } from './records.js';

export interface Header {
  readonly line: TextLine;
  readonly names: readonly string[];
}

function unreadable(message: string, details: Record<string, unknown>): IngestError {
  return new IngestError('INGEST_FILE_UNREADABLE', message, details);
}

export async function readHeader(records: RecordReader, format: CsvFormat): Promise<Header> {
  const line = await records.nextLine();
  if (line === undefined) throw unreadable('the file is empty', { reason: 'empty' });
  if (line.kind !== 'text') {
    const message =
      line.kind === 'invalid-utf8'
        ? 'the header line is not valid UTF-8; save the file as UTF-8'
        : `the header line is longer than ${format.maxLineBytes} bytes`;
    throw unreadable(message, { reason: line.kind, line: line.line });
  }
  if (line.text.startsWith('\ufffe') || line.text.includes('\u0000'))
    throw unreadable('the file looks like UTF-16 or binary; save it as UTF-8', { reason: 'encoding' });
  const split = splitCsvLine(line.text, format.delimiter);
  if (!split.ok) {
    const message = `the header line cannot be read: ${split.problem}`;
    throw unreadable(message, { reason: 'csv-syntax', line: line.line });
  }
  return { line, names: split.fields };
}

export interface WideColumn {
  readonly index: number;
  readonly header: string;
  tag: TagInfo | undefined;
}

export interface WideLayout {
  readonly timeIndex: number;
  readonly columns: readonly WideColumn[];
}

/** A header of one column that holds another common delimiter is a delimiter mismatch: say which. */
function delimiterHint(text: string, delimiter: string): string {
  const other = [';', '\t', ',', '|'].find((d) => d !== delimiter && text.includes(d));
  if (other === undefined) return '';
  return `; it holds "${other === '\t' ? 'tab' : other}" but this source splits on "${delimiter}": set the source's delimiter`;
}

/** Names the unknown columns of a file in one entry; their values are skipped. */
function unknownColumnsReason(unknown: readonly { head: string; tagName: string }[]): string {
  const named = unknown.slice(0, 20).map(({ head, tagName }) => {
    const alias = tagName === head ? '' : ` (alias of "${tagName}")`;
    return `"${head}"${alias}`;
  });
  const more = unknown.length > named.length ? ` and ${unknown.length - named.length} more` : '';
  const what = unknown.length === 1 ? 'column' : `${unknown.length} columns`;
  return `unknown-tag: ${what} ${named.join(', ')}${more} ${unknown.length === 1 ? 'is not a configured tag; its' : 'are not configured tags; their'} values are skipped`;
}

/** Maps a wide header to tags, quarantining unknown columns (once per file) and repeated tags. */
export async function wideLayout(
  header: Header,
  format: CsvFormat,
  tags: TagLookup,
  out: CsvOutput,
): Promise<WideLayout> {
  const { names, line } = header;
  const timeIndex = format.timeColumn === undefined ? 0 : names.indexOf(format.timeColumn);
  if (timeIndex < 0)
    throw unreadable(`no time column "${format.timeColumn ?? ''}" in the header`, {
      reason: 'no-time-column',
      header: names,
    });
  if (names.length < 2)
    throw unreadable(`the header has no tag columns${delimiterHint(line.text, format.delimiter)}`, {
      reason: 'no-tag-columns',
      header: names,
    });
  const columns: WideColumn[] = [];
  const seen = new Map<number, string>();
  const unknown: { head: string; tagName: string }[] = [];
  for (let index = 0; index < names.length; index++) {
    const head = names[index]!;
    if (index === timeIndex || head === '') continue;
    const tagName = format.aliases[head] ?? head;
    const tag = tags.get(tagName);
    const col: WideColumn = { index, header: head, tag };
    columns.push(col);
    if (tag === undefined) unknown.push({ head, tagName });
    else if (seen.has(tag.id)) {
      col.tag = undefined;
      const reason = `"${head}" is tag "${tag.name}" again (first column "${seen.get(tag.id) ?? ''}"); its values are skipped`;
      await out.reject(line.line, head, 'duplicate-column', reason, line.text);
    } else seen.set(tag.id, head);
  }
  if (unknown.length > 0) {
    const column = unknown.length === 1 ? unknown[0]!.head : null;
    const reason = unknownColumnsReason(unknown);
    await out.quarantine({ line: line.line, column, code: 'unknown-tag', reason, raw: clip(line.text) });
  }
  return { timeIndex, columns };
}

/** Reads the units row of a wide file; a column whose unit is not its tag's is quarantined once and skipped. */
export async function checkUnitsRow(
  records: RecordReader,
  names: readonly string[],
  layout: WideLayout,
  format: CsvFormat,
  out: CsvOutput,
): Promise<void> {
  const units = await records.nextLine();
  if (units === undefined || units.kind !== 'text')
    throw unreadable('the units row is missing or unreadable', { reason: 'no-units-row' });
  const split = splitCsvLine(units.text, format.delimiter);
  if (!split.ok || split.fields.length !== names.length)
    throw unreadable('the units row does not match the header', {
      reason: 'bad-units-row',
      line: units.line,
    });
  for (const col of layout.columns) {
    const unit = split.fields[col.index] ?? '';
    if (col.tag === undefined || sameUnit(unit, col.tag.unit)) continue;
    const reason = `the file gives "${unit}", tag "${col.tag.name}" is configured in "${col.tag.unit}"; its values are skipped`;
    await out.reject(units.line, col.header, 'unit-mismatch', reason, units.text);
    col.tag = undefined;
  }
}

export interface LongLayout {
  readonly tag: number;
  readonly time: number;
  readonly value: number;
  readonly quality: number | undefined;
}

/** Finds a long file's columns by their accepted names; a missing or doubled one rejects the file. */
export function longLayout(names: readonly string[], format: CsvFormat): LongLayout {
  const lower = names.map((n) => n.toLowerCase());
  const find = (what: keyof CsvFormat['longColumns'], required: boolean): number | undefined => {
    const accepted = format.longColumns[what].map((a) => a.toLowerCase());
    const found = lower.flatMap((n, i) => (accepted.includes(n) ? [i] : []));
    if (found.length === 0 && required)
      throw unreadable(`a long file needs a ${what} column; the header is ${names.join(format.delimiter)}`, {
        reason: 'missing-column',
        column: what,
      });
    // Two value columns cannot be told apart: refuse the file rather than guess.
    if (found.length > 1)
      throw unreadable(`the header has ${found.length} ${what} columns (duplicated header)`, {
        reason: 'duplicate-header',
        column: what,
      });
    return found[0];
  };
  const tag = find('tag', true)!;
  const time = find('time', true)!;
  const value = find('value', true)!;
  return { tag, time, value, quality: find('quality', false) };
}
