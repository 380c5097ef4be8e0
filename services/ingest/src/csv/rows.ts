/**
 * The data rows of a file, after its header: a wide file gives one sample per tag column and
 * row, a long file one sample per row. Each bad cell is quarantined on its own.
 */
import { QUALITY, type TagInfo, type TagLookup } from '../types.js';
import { parseQuality, parseValue } from './fields.js';
import type { CsvFormat } from './format.js';
import type { Header, LongLayout, WideLayout } from './header.js';
import { type CsvOutput, clip } from './output.js';
import type { RecordReader, TextLine } from './records.js';
import { type CsvTimeReader, FoldTracker } from './resolve-time.js';

export interface RowContext {
  readonly records: RecordReader;
  readonly format: CsvFormat;
  readonly header: Header;
  readonly times: CsvTimeReader;
  readonly out: CsvOutput;
  readonly lastLineMayBeCut: boolean;
}

export async function readWideRows(ctx: RowContext, layout: WideLayout): Promise<void> {
  const { records, format, out, times } = ctx;
  const names = ctx.header.names;
  const timeColumn = names[layout.timeIndex] ?? null;
  const fold = new FoldTracker();
  for (let l = await records.nextDataLine(ctx.lastLineMayBeCut); l !== undefined; ) {
    const fields = await records.fields(l, names);
    const time = fields === undefined ? undefined : times.read(fields[layout.timeIndex]!, fold);
    if (time !== undefined && !time.ok) await out.reject(l.line, timeColumn, time.code, time.reason, l.text);
    else if (fields !== undefined && time !== undefined) {
      const date = new Date(time.t);
      for (const col of layout.columns) {
        const cell = fields[col.index]!;
        if (cell === '') continue;
        if (col.tag === undefined) {
          out.summary.skippedCells++;
          continue;
        }
        const v = parseValue(cell, format.decimalComma);
        if (!v.ok) await out.reject(l.line, col.header, v.code, v.reason, l.text);
        else if (
          out.add({ tagId: col.tag.id, time: date, value: v.value, quality: QUALITY.good, ref: l.line })
        )
          await out.flushSamples();
      }
    }
    l = await records.nextDataLine(ctx.lastLineMayBeCut);
  }
}

interface UnknownTag {
  readonly line: number;
  count: number;
  readonly raw: string;
}

/** The unknown tag names of a long file in one entry, at the first line of the first one. */
async function reportUnknownTags(ctx: RowContext, column: number, unknown: Map<string, UnknownTag>) {
  if (unknown.size === 0) return;
  const all = [...unknown];
  const rows = all.reduce((n, [, u]) => n + u.count, 0);
  const named = all
    .slice(0, 20)
    .map(([name, u]) => `"${name}" (${u.count} row${u.count === 1 ? '' : 's'}, the first at line ${u.line})`);
  const more = all.length > named.length ? ` and ${all.length - named.length} more` : '';
  const what = all.length === 1 ? 'is not a configured tag' : `(${all.length} names) are not configured tags`;
  const reason = `unknown-tag: ${named.join(', ')}${more} ${what}; ${rows} row(s) skipped`;
  const first = all[0]![1];
  const entry = { line: first.line, column: ctx.header.names[column] ?? null, raw: first.raw };
  await ctx.out.quarantine({ ...entry, code: 'unknown-tag', reason });
}

/** One long row: its tag, value, time and quality, or the quarantine entry of the first bad cell. */
async function readLongRow(
  ctx: RowContext,
  l: TextLine,
  fields: readonly string[],
  tag: TagInfo,
  fold: FoldTracker,
  layout: LongLayout,
): Promise<void> {
  const { out, header } = ctx;
  const time = ctx.times.read(fields[layout.time]!, fold);
  if (!time.ok) return out.reject(l.line, header.names[layout.time] ?? null, time.code, time.reason, l.text);
  const v = parseValue(fields[layout.value]!, ctx.format.decimalComma);
  if (!v.ok) return out.reject(l.line, header.names[layout.value] ?? null, v.code, v.reason, l.text);
  const qi = layout.quality;
  const quality = qi === undefined ? QUALITY.good : parseQuality(fields[qi]!);
  if (quality === undefined) {
    const reason = `"${fields[qi!]}" is not 0..255, good, uncertain or bad`;
    return out.reject(l.line, header.names[qi!] ?? null, 'bad-quality', reason, l.text);
  }
  if (out.add({ tagId: tag.id, time: new Date(time.t), value: v.value, quality, ref: l.line }))
    await out.flushSamples();
}

export async function readLongRows(ctx: RowContext, layout: LongLayout, tags: TagLookup): Promise<void> {
  const { records, format, out } = ctx;
  const folds = new Map<number, FoldTracker>();
  const unknown = new Map<string, UnknownTag>();
  for (let l = await records.nextDataLine(ctx.lastLineMayBeCut); l !== undefined; ) {
    const fields = await records.fields(l, ctx.header.names);
    const name = fields?.[layout.tag];
    const tag = name === undefined ? undefined : tags.get(format.aliases[name] ?? name);
    if (fields === undefined || name === undefined) {
      // quarantined as a record
    } else if (tag === undefined) {
      // Once per file (written at the end with each name's row count), not once per row.
      const u = unknown.get(name);
      if (u === undefined) unknown.set(name, { line: l.line, count: 1, raw: clip(l.text) });
      else u.count++;
      out.summary.skippedCells++;
    } else if (fields[layout.value] !== '') {
      let fold = folds.get(tag.id);
      if (fold === undefined) {
        fold = new FoldTracker();
        folds.set(tag.id, fold);
      }
      await readLongRow(ctx, l, fields, tag, fold, layout);
    }
    l = await records.nextDataLine(ctx.lastLineMayBeCut);
  }
  await reportUnknownTags(ctx, layout.tag, unknown);
}
