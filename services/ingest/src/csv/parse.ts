/**
 * The CSV reading itself, without files or database: lines in, samples and quarantine
 * entries out through handlers, in bounded batches (memory stays flat for any file size).
 * File-level problems (empty, no usable header) throw INGEST_FILE_UNREADABLE.
 */
import type { Readable } from 'node:stream';
import { canonicalUnit } from '@isentrope/thermo';
import { IngestError } from '../errors.js';
import { QUALITY, type Sample, type TagInfo, type TagLookup } from '../types.js';
import { isStorableValue, tooLargeReason } from '../values.js';
import type { CsvFormat } from './format.js';
import { type Line, readLines, splitCsvLine } from './lines.js';
import { detectTimeFormat, FoldTracker, type ParsedTime, timeParser, ZoneResolver } from './time.js';

/** Stable reason codes of quarantine entries; the text after the code gives the values. */
export type QuarantineReason =
  | 'csv-syntax'
  | 'invalid-utf8'
  | 'line-too-long'
  | 'column-count'
  | 'bad-time'
  | 'time-in-dst-gap'
  | 'ambiguous-time'
  | 'bad-value'
  | 'non-finite-value'
  | 'value-too-large'
  | 'bad-quality'
  | 'unknown-tag'
  | 'duplicate-column'
  | 'unit-mismatch'
  | 'no-data'
  // Written by file.ts: a file refused whole, and a file whose content was already taken.
  | 'file-rejected'
  | 'duplicate-file';

export interface QuarantineEntry {
  /** Line in the file (1 = first line), or null for a problem of no single line. */
  readonly line: number | null;
  readonly column: string | null;
  readonly code: QuarantineReason;
  readonly reason: string;
  readonly raw: string | null;
}

export interface CsvHandlers {
  samples(batch: Sample[]): Promise<void>;
  quarantine(entries: QuarantineEntry[]): Promise<void>;
}

export interface CsvSummary {
  /** Data lines read (not counting the header, units row or blank lines). */
  rows: number;
  samples: number;
  /** Quarantine entries written (a bad row, a bad cell, once per unknown or skipped column/tag, or once for a file without data rows). */
  quarantined: number;
  /** Cells not stored because their column or tag was quarantined once (unknown tag, duplicate, unit mismatch). */
  skippedCells: number;
  /** The time format detected for this file, if any timestamp was read. */
  timeFormat: string | undefined;
}

const NUMBER = /^[+-]?(?:\d+(?:\.\d*)?|\.\d+)(?:[eE][+-]?\d+)?$/;
const NON_FINITE = /^[+-]?(?:nan|inf|infinity|1\.#inf|1\.#ind|1\.#qnan|#n\/a|#num!|#div\/0!|#value!)$/i;
const RAW_MAX = 2000;

type ValueResult =
  | { ok: true; value: number }
  | { ok: false; code: 'bad-value' | 'non-finite-value' | 'value-too-large'; reason: string };

export function parseValue(cell: string, decimalComma: boolean): ValueResult {
  let text = cell;
  if (decimalComma) {
    if (text.includes('.'))
      return {
        ok: false,
        code: 'bad-value',
        reason: `"${cell}" has a point, but this source writes a decimal comma`,
      };
    text = text.replace(',', '.');
  }
  if (NUMBER.test(text)) {
    const value = Number(text);
    if (isStorableValue(value)) return { ok: true, value };
    if (Number.isFinite(value))
      return { ok: false, code: 'value-too-large', reason: tooLargeReason(`"${cell}"`) };
    return { ok: false, code: 'non-finite-value', reason: `"${cell}" overflows a double` };
  }
  if (NON_FINITE.test(text))
    return { ok: false, code: 'non-finite-value', reason: `"${cell}" is not a finite number` };
  return { ok: false, code: 'bad-value', reason: `"${cell}" is not a number` };
}

/** Quality cell of a long file: a code 0..255 (OPC DA) or good / uncertain / bad; empty = good. */
export function parseQuality(cell: string): number | undefined {
  if (cell === '') return QUALITY.good;
  const word = cell.toLowerCase();
  if (word === 'good') return QUALITY.good;
  if (word === 'uncertain') return QUALITY.uncertain;
  if (word === 'bad') return QUALITY.bad;
  if (/^\d{1,3}$/.test(cell)) {
    const q = Number(cell);
    return q <= 255 ? q : undefined;
  }
  return undefined;
}

function sameUnit(a: string, b: string): boolean {
  try {
    return canonicalUnit(a) === canonicalUnit(b);
  } catch {
    return false;
  }
}

function clip(text: string): string {
  return text.length > RAW_MAX ? `${text.slice(0, RAW_MAX)}...` : text;
}

function describeWall(wall: number): string {
  return new Date(wall).toISOString().slice(0, 19).replace('T', ' ');
}

interface WideColumn {
  readonly index: number;
  readonly header: string;
  tag: TagInfo | undefined;
}

export interface ParseCsvOptions {
  /** Samples per handler call. */
  readonly batchSize?: number;
}

/** Reads one CSV stream; see the module comment. */
export async function parseCsv(
  input: Readable,
  format: CsvFormat,
  tags: TagLookup,
  handlers: CsvHandlers,
  options: ParseCsvOptions = {},
): Promise<CsvSummary> {
  const batchSize = options.batchSize ?? 20_000;
  const zone = new ZoneResolver(format.timeZone);
  const summary: CsvSummary = { rows: 0, samples: 0, quarantined: 0, skippedCells: 0, timeFormat: undefined };
  let batch: Sample[] = [];
  let pending: QuarantineEntry[] = [];

  const quarantine = async (entry: QuarantineEntry): Promise<void> => {
    pending.push(entry);
    summary.quarantined++;
    if (pending.length >= 500) {
      const out = pending;
      pending = [];
      await handlers.quarantine(out);
    }
  };
  const push = async (sample: Sample): Promise<void> => {
    batch.push(sample);
    summary.samples++;
    if (batch.length >= batchSize) {
      const out = batch;
      batch = [];
      await handlers.samples(out);
    }
  };

  let parser: ((text: string) => ParsedTime | undefined) | undefined;
  /** Time of a cell as a UTC instant [ms], or the quarantine entry explaining why not. */
  const readTime = (
    cell: string,
    fold: FoldTracker,
  ): { ok: true; t: number } | { ok: false; code: QuarantineReason; reason: string } => {
    if (cell === '') return { ok: false, code: 'bad-time', reason: 'the timestamp is empty' };
    if (parser === undefined) {
      const found = detectTimeFormat(cell, format.timeFormats);
      if (found === undefined) {
        return {
          ok: false,
          code: 'bad-time',
          reason: `"${cell}" matches none of the formats ${format.timeFormats.join(', ')}`,
        };
      }
      summary.timeFormat = found;
      parser = timeParser(found);
    }
    const parsed = parser(cell);
    if (parsed === undefined) {
      return {
        ok: false,
        code: 'bad-time',
        reason: `"${cell}" does not match this file's time format ${summary.timeFormat ?? ''}`,
      };
    }
    if (parsed.kind === 'instant') return { ok: true, t: parsed.t };
    const r = zone.resolve(parsed.wall);
    if (r.kind === 'unique') {
      fold.note(parsed.wall);
      return { ok: true, t: r.t };
    }
    if (r.kind === 'gap') {
      return {
        ok: false,
        code: 'time-in-dst-gap',
        reason: `${describeWall(parsed.wall)} does not exist in ${format.timeZone} (clocks jumped forward)`,
      };
    }
    if (format.ambiguousTime === 'quarantine') {
      return {
        ok: false,
        code: 'ambiguous-time',
        reason: `${describeWall(parsed.wall)} occurs twice in ${format.timeZone} (clocks went back); this source quarantines the repeated hour`,
      };
    }
    return { ok: true, t: fold.ambiguous(parsed.wall) === 'earlier' ? r.earlier : r.later };
  };

  const lines = readLines(input, format.maxLineBytes);
  const next = async (): Promise<Line | undefined> => {
    for (;;) {
      const item = await lines.next();
      if (item.done === true) return undefined;
      const l = item.value;
      if (l.kind === 'text' && l.text.trim() === '') continue;
      return l;
    }
  };

  const header = await next();
  if (header === undefined)
    throw new IngestError('INGEST_FILE_UNREADABLE', 'the file is empty', { reason: 'empty' });
  if (header.kind !== 'text') {
    throw new IngestError(
      'INGEST_FILE_UNREADABLE',
      header.kind === 'invalid-utf8'
        ? 'the header line is not valid UTF-8; save the file as UTF-8'
        : `the header line is longer than ${format.maxLineBytes} bytes`,
      { reason: header.kind, line: header.line },
    );
  }
  if (header.text.startsWith('\ufffe') || header.text.includes('\u0000')) {
    throw new IngestError(
      'INGEST_FILE_UNREADABLE',
      'the file looks like UTF-16 or binary; save it as UTF-8',
      { reason: 'encoding' },
    );
  }
  const headerSplit = splitCsvLine(header.text, format.delimiter);
  if (!headerSplit.ok) {
    throw new IngestError(
      'INGEST_FILE_UNREADABLE',
      `the header line cannot be read: ${headerSplit.problem}`,
      { reason: 'csv-syntax', line: header.line },
    );
  }
  const names = headerSplit.fields;
  const width = names.length;

  const badLine = async (l: Line): Promise<boolean> => {
    if (l.kind === 'invalid-utf8') {
      await quarantine({
        line: l.line,
        column: null,
        code: 'invalid-utf8',
        reason: 'invalid-utf8: the line holds bytes that are not UTF-8',
        raw: clip(l.text),
      });
      return true;
    }
    if (l.kind === 'too-long') {
      await quarantine({
        line: l.line,
        column: null,
        code: 'line-too-long',
        reason: `line-too-long: ${l.bytes} bytes, more than the ${format.maxLineBytes} allowed`,
        raw: clip(l.head),
      });
      return true;
    }
    return false;
  };

  const splitRow = async (l: Line & { kind: 'text' }): Promise<string[] | undefined> => {
    const split = splitCsvLine(l.text, format.delimiter);
    if (!split.ok) {
      await quarantine({
        line: l.line,
        column: names[split.column - 1] ?? null,
        code: 'csv-syntax',
        reason: `csv-syntax: ${split.problem}`,
        raw: clip(l.text),
      });
      return undefined;
    }
    if (split.fields.length !== width) {
      await quarantine({
        line: l.line,
        column: null,
        code: 'column-count',
        reason: `column-count: ${split.fields.length} fields, the header has ${width}`,
        raw: clip(l.text),
      });
      return undefined;
    }
    return split.fields;
  };

  if (format.layout === 'wide') {
    const timeIndex = format.timeColumn === undefined ? 0 : names.indexOf(format.timeColumn);
    if (timeIndex < 0) {
      throw new IngestError(
        'INGEST_FILE_UNREADABLE',
        `no time column "${format.timeColumn ?? ''}" in the header`,
        { reason: 'no-time-column', header: names },
      );
    }
    if (width < 2) {
      // A header of one column that holds another common delimiter is a delimiter mismatch: say which.
      const other = [';', '\t', ',', '|'].find((d) => d !== format.delimiter && header.text.includes(d));
      const hint =
        other === undefined
          ? ''
          : `; it holds "${other === '\t' ? 'tab' : other}" but this source splits on "${format.delimiter}": set the source's delimiter`;
      throw new IngestError('INGEST_FILE_UNREADABLE', `the header has no tag columns${hint}`, {
        reason: 'no-tag-columns',
        header: names,
      });
    }
    const columns: WideColumn[] = [];
    const seen = new Map<number, string>();
    for (let i = 0; i < width; i++) {
      if (i === timeIndex) continue;
      const head = names[i]!;
      if (head === '') continue;
      const tagName = format.aliases[head] ?? head;
      const tag = tags.get(tagName);
      const col: WideColumn = { index: i, header: head, tag };
      if (tag === undefined) {
        await quarantine({
          line: header.line,
          column: head,
          code: 'unknown-tag',
          reason: `unknown-tag: column "${head}"${tagName === head ? '' : ` (alias of "${tagName}")`} is not a configured tag; its values are skipped`,
          raw: clip(header.text),
        });
      } else if (seen.has(tag.id)) {
        await quarantine({
          line: header.line,
          column: head,
          code: 'duplicate-column',
          reason: `duplicate-column: "${head}" is tag "${tag.name}" again (first column "${seen.get(tag.id) ?? ''}"); its values are skipped`,
          raw: clip(header.text),
        });
        col.tag = undefined;
      } else {
        seen.set(tag.id, head);
      }
      columns.push(col);
    }
    if (format.unitsRow) {
      const unitsLine = await next();
      if (unitsLine === undefined || unitsLine.kind !== 'text') {
        throw new IngestError('INGEST_FILE_UNREADABLE', 'the units row is missing or unreadable', {
          reason: 'no-units-row',
        });
      }
      const split = splitCsvLine(unitsLine.text, format.delimiter);
      if (!split.ok || split.fields.length !== width) {
        throw new IngestError('INGEST_FILE_UNREADABLE', 'the units row does not match the header', {
          reason: 'bad-units-row',
          line: unitsLine.line,
        });
      }
      for (const col of columns) {
        const unit = split.fields[col.index] ?? '';
        if (col.tag !== undefined && !sameUnit(unit, col.tag.unit)) {
          await quarantine({
            line: unitsLine.line,
            column: col.header,
            code: 'unit-mismatch',
            reason: `unit-mismatch: the file gives "${unit}", tag "${col.tag.name}" is configured in "${col.tag.unit}"; its values are skipped`,
            raw: clip(unitsLine.text),
          });
          col.tag = undefined;
        }
      }
    }
    const fold = new FoldTracker();
    for (let l = await next(); l !== undefined; l = await next()) {
      summary.rows++;
      if (await badLine(l)) continue;
      if (l.kind !== 'text') continue;
      const fields = await splitRow(l);
      if (fields === undefined) continue;
      const time = readTime(fields[timeIndex]!, fold);
      if (!time.ok) {
        await quarantine({
          line: l.line,
          column: names[timeIndex] ?? null,
          code: time.code,
          reason: `${time.code}: ${time.reason}`,
          raw: clip(l.text),
        });
        continue;
      }
      const date = new Date(time.t);
      for (const col of columns) {
        const cell = fields[col.index]!;
        if (cell === '') continue;
        if (col.tag === undefined) {
          summary.skippedCells++;
          continue;
        }
        const v = parseValue(cell, format.decimalComma);
        if (!v.ok) {
          await quarantine({
            line: l.line,
            column: col.header,
            code: v.code,
            reason: `${v.code}: ${v.reason}`,
            raw: clip(l.text),
          });
          continue;
        }
        await push({ tagId: col.tag.id, time: date, value: v.value, quality: QUALITY.good });
      }
    }
  } else {
    const lower = names.map((n) => n.toLowerCase());
    const find = (accepted: readonly string[]): number[] =>
      lower.flatMap((n, i) => (accepted.some((a) => a.toLowerCase() === n) ? [i] : []));
    const tagIdx = find(format.longColumns.tag);
    const timeIdx = find(format.longColumns.time);
    const valueIdx = find(format.longColumns.value);
    const qualityIdx = find(format.longColumns.quality);
    for (const [what, idx] of [
      ['tag', tagIdx],
      ['time', timeIdx],
      ['value', valueIdx],
    ] as const) {
      if (idx.length === 0)
        throw new IngestError(
          'INGEST_FILE_UNREADABLE',
          `a long file needs a ${what} column; the header is ${names.join(format.delimiter)}`,
          { reason: 'missing-column', column: what },
        );
    }
    for (const [what, idx] of [
      ['tag', tagIdx],
      ['time', timeIdx],
      ['value', valueIdx],
      ['quality', qualityIdx],
    ] as const) {
      // Two value columns cannot be told apart: refuse the file rather than guess.
      if (idx.length > 1)
        throw new IngestError(
          'INGEST_FILE_UNREADABLE',
          `the header has ${idx.length} ${what} columns (duplicated header)`,
          { reason: 'duplicate-header', column: what },
        );
    }
    const ti = tagIdx[0]!;
    const tmi = timeIdx[0]!;
    const vi = valueIdx[0]!;
    const qi = qualityIdx[0];
    const folds = new Map<number, FoldTracker>();
    const unknown = new Map<string, { line: number; count: number; raw: string }>();
    for (let l = await next(); l !== undefined; l = await next()) {
      summary.rows++;
      if (await badLine(l)) continue;
      if (l.kind !== 'text') continue;
      const fields = await splitRow(l);
      if (fields === undefined) continue;
      const name = fields[ti]!;
      const tag = tags.get(format.aliases[name] ?? name);
      if (tag === undefined) {
        // Once per unknown tag (written at the end with its row count), not once per row.
        const u = unknown.get(name);
        if (u === undefined) unknown.set(name, { line: l.line, count: 1, raw: clip(l.text) });
        else u.count++;
        summary.skippedCells++;
        continue;
      }
      const valueCell = fields[vi]!;
      if (valueCell === '') continue;
      let fold = folds.get(tag.id);
      if (fold === undefined) {
        fold = new FoldTracker();
        folds.set(tag.id, fold);
      }
      const time = readTime(fields[tmi]!, fold);
      if (!time.ok) {
        await quarantine({
          line: l.line,
          column: names[tmi] ?? null,
          code: time.code,
          reason: `${time.code}: ${time.reason}`,
          raw: clip(l.text),
        });
        continue;
      }
      const v = parseValue(valueCell, format.decimalComma);
      if (!v.ok) {
        await quarantine({
          line: l.line,
          column: names[vi] ?? null,
          code: v.code,
          reason: `${v.code}: ${v.reason}`,
          raw: clip(l.text),
        });
        continue;
      }
      const quality = qi === undefined ? QUALITY.good : parseQuality(fields[qi]!);
      if (quality === undefined) {
        await quarantine({
          line: l.line,
          column: names[qi!] ?? null,
          code: 'bad-quality',
          reason: `bad-quality: "${fields[qi!]}" is not 0..255, good, uncertain or bad`,
          raw: clip(l.text),
        });
        continue;
      }
      await push({ tagId: tag.id, time: new Date(time.t), value: v.value, quality });
    }
    for (const [name, u] of unknown) {
      await quarantine({
        line: u.line,
        column: names[ti] ?? null,
        code: 'unknown-tag',
        reason: `unknown-tag: "${name}" is not a configured tag; ${u.count} row(s) skipped, the first at line ${u.line}`,
        raw: u.raw,
      });
    }
  }
  if (summary.rows === 0) {
    // Not an error of any row, but an export that wrote no data usually means trouble upstream: say so.
    await quarantine({
      line: header.line,
      column: null,
      code: 'no-data',
      reason: `no-data: the file has a header${format.unitsRow ? ' and a units row' : ''} but no data rows; nothing stored`,
      raw: clip(header.text),
    });
  }
  if (batch.length > 0) await handlers.samples(batch);
  if (pending.length > 0) await handlers.quarantine(pending);
  return summary;
}
