/**
 * The CSV reading itself, without files or database: bytes in, samples and quarantine
 * entries out through handlers, in bounded batches (memory stays flat for any file size).
 * The steps each have their module: header and format detection (header.ts), record cutting
 * (records.ts over lines.ts), field decoding (fields.ts), time resolution (resolve-time.ts),
 * and the row loops of the two layouts (rows.ts).
 * File-level problems (empty, no usable header) throw INGEST_FILE_UNREADABLE.
 */
import type { Readable } from 'node:stream';
import type { TagLookup } from '../types.js';
import type { CsvFormat } from './format.js';
import { checkUnitsRow, longLayout, readHeader, wideLayout } from './header.js';
import { type CsvHandlers, CsvOutput, type CsvSummary, clip } from './output.js';
import { RecordReader } from './records.js';
import { CsvTimeReader } from './resolve-time.js';
import { readLongRows, readWideRows } from './rows.js';

export { parseQuality, parseValue } from './fields.js';
export type { CsvHandlers, CsvSummary, QuarantineEntry, QuarantineReason } from './output.js';

export interface ParseCsvOptions {
  /** Samples per handler call. */
  readonly batchSize?: number;
  /**
   * The file may still be being written (not renamed from *.part, changed within the settling
   * time): a last line without a line end is quarantined as incomplete instead of stored.
   */
  readonly lastLineMayBeCut?: boolean;
  /** Clock [ms] for the time window (format.timeWindow). */
  readonly now?: () => number;
}

/** Reads one CSV stream; see the module comment. */
export async function parseCsv(
  input: Readable,
  format: CsvFormat,
  tags: TagLookup,
  handlers: CsvHandlers,
  options: ParseCsvOptions = {},
): Promise<CsvSummary> {
  const out = new CsvOutput(handlers, options.batchSize ?? 20_000);
  const times = new CsvTimeReader(format, format.timeWindow, (options.now ?? Date.now)());
  const records = new RecordReader(input, format, out);
  const header = await readHeader(records, format);
  const ctx = { records, format, header, times, out, lastLineMayBeCut: options.lastLineMayBeCut ?? false };
  if (format.layout === 'wide') {
    const layout = await wideLayout(header, format, tags, out);
    if (format.unitsRow) await checkUnitsRow(records, header.names, layout, format, out);
    await readWideRows(ctx, layout);
  } else {
    await readLongRows(ctx, longLayout(header.names, format), tags);
  }
  out.summary.timeFormat = times.format;
  if (out.summary.rows === 0) {
    // Not an error of any row, but an export that wrote no data usually means trouble upstream: say so.
    await out.quarantine({
      line: header.line.line,
      column: null,
      code: 'no-data',
      reason: `no-data: the file has a header${format.unitsRow ? ' and a units row' : ''} but no data rows; nothing stored`,
      raw: clip(header.line.text),
    });
  }
  await out.end();
  return out.summary;
}
