/**
 * One CSV file end to end: checksum, the ingested_files record, parsing, samples to the
 * store, bad rows to quarantine, and the file moved to processed/ or rejected/. A file refused
 * whole, or dropped again, gets a quarantine entry too, so every drop shows on the quarantine page.
 *
 * Exactly once: the file's SHA-256 is unique in ingested_files. A file already 'done' is
 * not read again. A file left 'processing' (the process died) or 'failed' is read again
 * from the start: its row entries in quarantine are replaced and its samples, written again, add
 * nothing (the store keys on (tag_id, time)). Each drop refused whole keeps its own entry, naming
 * the file dropped.
 *
 * Corrected files: the first stored value of a (tag, time) is kept. A row repeating it exactly
 * is counted as a duplicate; a row with another value is refused and quarantined on its own
 * (conflicting-value: line, tag, the value kept and the value refused). rows_stored counts only
 * rows new to the store.
 */
import { createHash } from 'node:crypto';
import { createReadStream } from 'node:fs';
import { stat } from 'node:fs/promises';
import { dirname, join } from 'node:path';
import { SampleWriter } from '@isentrope/store';
import type pg from 'pg';
import { IngestError } from '../errors.js';
import { SpanLimitedSink } from '../span.js';
import type { Sample, TagLookup } from '../types.js';
import { moveFile, rejectFile } from './file-moves.js';
import {
  claimFile,
  conflictEntries,
  type FileWriteCounts,
  failFile,
  finishFile,
  writeQuarantine,
} from './file-records.js';
import { type CsvFormat, type CsvFormatInput, csvFormatSchema } from './format.js';
import { type CsvSummary, parseCsv } from './parse.js';

export type { FileWriteCounts } from './file-records.js';

export interface IngestCsvFileOptions {
  readonly pool: pg.Pool;
  /** Source id (the plant file's source, or "manual" for a command line import). */
  readonly source: string;
  readonly tags: TagLookup;
  readonly format?: CsvFormatInput;
  /** Where files go when done; null leaves them in place. Default: "processed" beside the file. */
  readonly processedDir?: string | null;
  /** Where unreadable files go with a .reason.txt; null leaves them. Default: "rejected" beside the file. */
  readonly rejectedDir?: string | null;
  readonly batchSize?: number;
  /**
   * The file is known to be complete (renamed from *.part, or held still for format.settleMs).
   * Default: when it has not changed for format.settleMs; otherwise a last line without a line
   * end is quarantined as incomplete-line instead of stored.
   */
  readonly complete?: boolean;
  /** Clock [ms] (settling time, time window). */
  readonly now?: () => number;
  /** Told of every batch handed to the store (for metrics). */
  readonly onSamples?: (batch: readonly Sample[]) => void;
}

export type IngestCsvFileResult =
  | {
      readonly status: 'done';
      readonly fileId: number;
      readonly checksum: string;
      readonly summary: CsvSummary;
      /** What the store did with the file's samples. */
      readonly written: FileWriteCounts;
      readonly movedTo: string | null;
    }
  | {
      readonly status: 'duplicate';
      readonly fileId: number;
      readonly checksum: string;
      readonly movedTo: string | null;
    }
  | {
      readonly status: 'rejected';
      readonly fileId: number;
      readonly checksum: string;
      readonly reason: string;
      readonly movedTo: string | null;
    };

export async function sha256File(path: string): Promise<string> {
  const hash = createHash('sha256');
  for await (const chunk of createReadStream(path, { highWaterMark: 1 << 20 })) hash.update(chunk as Buffer);
  return hash.digest('hex');
}

interface FileJob {
  readonly path: string;
  readonly options: IngestCsvFileOptions;
  readonly format: CsvFormat;
  readonly fileId: number;
  readonly checksum: string;
  readonly now: number;
  readonly mtimeMs: number;
}

/** Parses the file into a SampleWriter of its own; conflicts go to quarantine before the last flush resolves. */
async function readIntoStore(job: FileJob): Promise<{ summary: CsvSummary; written: FileWriteCounts }> {
  const { pool, source } = job.options;
  const writer = new SampleWriter(pool, {
    // Two batches in flight keep the database busy; more only hold memory (a file waits anyway).
    maxQueuedBatches: 2,
    onConflicts: async (conflicts) =>
      writeQuarantine(pool, job.fileId, source, await conflictEntries(pool, conflicts)),
  });
  const sink = new SpanLimitedSink(writer);
  const complete = job.options.complete ?? job.now - job.mtimeMs >= job.format.settleMs;
  try {
    const summary = await parseCsv(
      createReadStream(job.path, { highWaterMark: 1 << 16 }),
      job.format,
      job.options.tags,
      {
        samples: async (batch) => {
          await sink.write(batch);
          job.options.onSamples?.(batch);
        },
        quarantine: (entries) => writeQuarantine(pool, job.fileId, source, entries),
      },
      { batchSize: job.options.batchSize ?? 20_000, lastLineMayBeCut: !complete, now: () => job.now },
    );
    await sink.close();
    const s = writer.stats;
    return {
      summary,
      written: { stored: s.rowsStored, duplicates: s.rowsDuplicate, conflicts: s.rowsConflicting },
    };
  } catch (error) {
    await sink.close().catch(() => {});
    throw error;
  }
}

/** A file refused whole: marked failed, moved to rejected/ with its reason, and shown in quarantine. */
async function refuse(
  job: FileJob,
  rejectedDir: string | null,
  error: IngestError,
): Promise<IngestCsvFileResult> {
  const { pool, source } = job.options;
  await failFile(pool, job.fileId, error.message);
  const movedTo = rejectedDir === null ? null : await rejectFile(job.path, rejectedDir, job.checksum, error);
  const line = error.details.line;
  await writeQuarantine(pool, job.fileId, source, [
    {
      line: typeof line === 'number' ? line : null,
      column: null,
      code: 'file-rejected',
      // The path names this drop: the record keeps only the last path of the content.
      reason: `file-rejected: ${job.path}: ${error.message}; nothing stored${movedTo === null ? '' : `, moved to ${movedTo}`}`,
      raw: null,
    },
  ]);
  const { fileId, checksum } = job;
  return { status: 'rejected', fileId, checksum, reason: error.message, movedTo };
}

/** A file whose content was stored before: moved aside and noted in quarantine, so the drop is seen. */
async function duplicate(job: FileJob, processedDir: string | null): Promise<IngestCsvFileResult> {
  const { path, checksum, fileId } = job;
  const short = checksum.slice(0, 12);
  const movedTo = processedDir === null ? null : await moveFile(path, processedDir, `duplicate-${short}`);
  // The duplicate has no ingested_files record of its own (the checksum is unique): its entry
  // names it, and the first file through file_id.
  const reason = `duplicate-file: ${path} has the same content (SHA-256 ${short}...) as this file, already stored; not read again${movedTo === null ? '' : `, moved to ${movedTo}`}`;
  await writeQuarantine(job.options.pool, fileId, job.options.source, [
    { line: null, column: null, code: 'duplicate-file', reason, raw: null },
  ]);
  return { status: 'duplicate', fileId, checksum, movedTo };
}

/** Ingests one CSV file (see the module comment). Database errors reject and leave the file in place to be retried. */
export async function ingestCsvFile(
  path: string,
  options: IngestCsvFileOptions,
): Promise<IngestCsvFileResult> {
  const format = csvFormatSchema.parse(options.format ?? {});
  const folder = dirname(path);
  const processedDir = options.processedDir === undefined ? join(folder, 'processed') : options.processedDir;
  const rejectedDir = options.rejectedDir === undefined ? join(folder, 'rejected') : options.rejectedDir;
  const { size, mtimeMs } = await stat(path);
  const checksum = await sha256File(path);
  const claim = await claimFile(options.pool, { source: options.source, path, checksum, size });
  const now = (options.now ?? Date.now)();
  const job: FileJob = { path, options, format, fileId: claim.fileId, checksum, now, mtimeMs };
  if (claim.kind === 'done') return duplicate(job, processedDir);
  let read: Awaited<ReturnType<typeof readIntoStore>>;
  try {
    read = await readIntoStore(job);
  } catch (error) {
    if (!(error instanceof IngestError) || error.code !== 'INGEST_FILE_UNREADABLE') throw error;
    return refuse(job, rejectedDir, error);
  }
  const { summary, written } = read;
  await finishFile(
    options.pool,
    claim.fileId,
    summary.rows,
    summary.quarantined + written.conflicts,
    written,
  );
  const movedTo = processedDir === null ? null : await moveFile(path, processedDir, checksum.slice(0, 12));
  return { status: 'done', fileId: claim.fileId, checksum, summary, written, movedTo };
}
