/**
 * What parsing a CSV file produces: samples and quarantine entries, handed on in bounded
 * batches (memory stays flat for any file size), and the counts of the file's summary.
 */
import type { Sample } from '../types.js';

/** Stable reason codes of quarantine entries; the text after the code gives the values. */
export type QuarantineReason =
  | 'csv-syntax'
  | 'invalid-utf8'
  | 'line-too-long'
  | 'incomplete-line'
  | 'column-count'
  | 'bad-time'
  | 'time-in-dst-gap'
  | 'ambiguous-time'
  | 'time-out-of-range'
  | 'bad-value'
  | 'non-finite-value'
  | 'value-too-large'
  | 'bad-quality'
  | 'unknown-tag'
  | 'duplicate-column'
  | 'unit-mismatch'
  | 'no-data'
  // Written by file.ts: a file refused whole, a file whose content was already taken, and a
  // row whose tag and time already hold another value (the first stored value is kept).
  | 'file-rejected'
  | 'duplicate-file'
  | 'conflicting-value';

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
  /** Samples read from the file and handed to the store (what the store did with them: file.ts). */
  samples: number;
  /** Quarantine entries written (a bad row, a bad cell, once per file for unknown columns or tags, once per skipped column, or once for a file without data rows). */
  quarantined: number;
  /** Cells not stored because their column or tag was quarantined once (unknown tag, duplicate, unit mismatch). */
  skippedCells: number;
  /** The time format detected for this file, if any timestamp was read. */
  timeFormat: string | undefined;
}

const RAW_MAX = 2000;

/** The raw text of a line as kept in quarantine (long lines cut). */
export function clip(text: string): string {
  return text.length > RAW_MAX ? `${text.slice(0, RAW_MAX)}...` : text;
}

const QUARANTINE_BATCH = 500;

/** Gathers samples and entries and hands them to the handlers in batches. */
export class CsvOutput {
  readonly summary: CsvSummary = {
    rows: 0,
    samples: 0,
    quarantined: 0,
    skippedCells: 0,
    timeFormat: undefined,
  };
  private batch: Sample[] = [];
  private pending: QuarantineEntry[] = [];

  constructor(
    private readonly handlers: CsvHandlers,
    private readonly batchSize: number,
  ) {}

  /** Takes a sample; true when a batch is full and flushSamples() must be awaited. */
  add(sample: Sample): boolean {
    this.batch.push(sample);
    this.summary.samples++;
    return this.batch.length >= this.batchSize;
  }

  async flushSamples(): Promise<void> {
    if (this.batch.length === 0) return;
    const out = this.batch;
    this.batch = [];
    await this.handlers.samples(out);
  }

  async quarantine(entry: QuarantineEntry): Promise<void> {
    this.pending.push(entry);
    this.summary.quarantined++;
    if (this.pending.length >= QUARANTINE_BATCH) await this.flushQuarantine();
  }

  /** A quarantine entry for one line, its code leading the reason. */
  async reject(
    line: number,
    column: string | null,
    code: QuarantineReason,
    reason: string,
    raw: string,
  ): Promise<void> {
    await this.quarantine({ line, column, code, reason: `${code}: ${reason}`, raw: clip(raw) });
  }

  private async flushQuarantine(): Promise<void> {
    const out = this.pending;
    this.pending = [];
    await this.handlers.quarantine(out);
  }

  /** Hands on what is left. */
  async end(): Promise<void> {
    await this.flushSamples();
    if (this.pending.length > 0) await this.flushQuarantine();
  }
}
