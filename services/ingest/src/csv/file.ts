/**
 * One CSV file end to end: checksum, the ingested_files record, parsing, samples to the
 * sink, bad rows to quarantine, and the file moved to processed/ or rejected/. A file refused
 * whole, or dropped again, gets a quarantine entry too, so every drop shows on the quarantine page.
 *
 * Exactly once: the file's SHA-256 is unique in ingested_files. A file already 'done' is
 * not read again. A file left 'processing' (the process died) or 'failed' is read again
 * from the start: its quarantine rows are replaced and its samples, written again, add
 * nothing (the sink keys on (tag_id, time)).
 */
import { createHash } from 'node:crypto';
import { createReadStream } from 'node:fs';
import { copyFile, mkdir, rename, stat, unlink, writeFile } from 'node:fs/promises';
import { basename, dirname, join } from 'node:path';
import { SampleWriter } from '@isentrope/store';
import type pg from 'pg';
import { IngestError } from '../errors.js';
import type { Sample, SampleSink, TagLookup } from '../types.js';
import { type CsvFormatInput, csvFormatSchema } from './format.js';
import { type CsvSummary, parseCsv, type QuarantineEntry } from './parse.js';

export interface IngestCsvFileOptions {
  readonly pool: pg.Pool;
  /** Source id (the plant file's source, or "manual" for a command line import). */
  readonly source: string;
  readonly tags: TagLookup;
  readonly format?: CsvFormatInput;
  /** Default: the store's SampleWriter on the pool (one per file, closed at the end). */
  readonly sink?: SampleSink;
  /** Where files go when done; null leaves them in place. Default: "processed" beside the file. */
  readonly processedDir?: string | null;
  /** Where unreadable files go with a .reason.txt; null leaves them. Default: "rejected" beside the file. */
  readonly rejectedDir?: string | null;
  readonly batchSize?: number;
  /** Told of every stored batch (for metrics). */
  readonly onSamples?: (batch: readonly Sample[]) => void;
}

export type IngestCsvFileResult =
  | {
      readonly status: 'done';
      readonly fileId: number;
      readonly checksum: string;
      readonly summary: CsvSummary;
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

async function moveFile(path: string, dir: string, suffix: string): Promise<string> {
  await mkdir(dir, { recursive: true });
  let target = join(dir, basename(path));
  try {
    await stat(target);
    // A file of the same name was processed before: keep both.
    target = join(dir, `${basename(path)}.${suffix}`);
  } catch {
    // no file of that name yet
  }
  try {
    await rename(path, target);
  } catch (error) {
    if ((error as NodeJS.ErrnoException).code !== 'EXDEV') throw error;
    await copyFile(path, target);
    await unlink(path);
  }
  return target;
}

async function writeQuarantine(
  pool: pg.Pool,
  fileId: number,
  source: string,
  entries: readonly QuarantineEntry[],
): Promise<void> {
  if (entries.length === 0) return;
  // PostgreSQL text cannot hold NUL; show it instead of failing the insert.
  const clean = (s: string | null): string | null => (s === null ? null : s.replaceAll('\u0000', '\\0'));
  await pool.query(
    `INSERT INTO quarantine (file_id, source, line, column_name, reason, raw)
     SELECT $1, $2, * FROM unnest($3::int[], $4::text[], $5::text[], $6::text[])`,
    [
      fileId,
      source,
      entries.map((e) => e.line),
      entries.map((e) => clean(e.column)),
      entries.map((e) => clean(e.reason)),
      entries.map((e) => clean(e.raw)),
    ],
  );
}

/** Ingests one CSV file (see the module comment). Database errors reject and leave the file in place to be retried. */
export async function ingestCsvFile(
  path: string,
  options: IngestCsvFileOptions,
): Promise<IngestCsvFileResult> {
  const format = csvFormatSchema.parse(options.format ?? {});
  const { pool, source } = options;
  const ownSink = options.sink === undefined;
  // Two batches in flight keep the database busy; more only hold memory (a file waits anyway).
  const sink: SampleSink = options.sink ?? new SampleWriter(pool, { maxQueuedBatches: 2 });
  const folder = dirname(path);
  const processedDir = options.processedDir === undefined ? join(folder, 'processed') : options.processedDir;
  const rejectedDir = options.rejectedDir === undefined ? join(folder, 'rejected') : options.rejectedDir;
  const size = (await stat(path)).size;
  const checksum = await sha256File(path);

  const inserted = await pool.query<{ id: number }>(
    `INSERT INTO ingested_files (source, path, checksum, size_bytes) VALUES ($1, $2, $3, $4)
     ON CONFLICT (checksum) DO NOTHING RETURNING id`,
    [source, path, checksum, size],
  );
  let fileId: number;
  if (inserted.rows[0] !== undefined) {
    fileId = inserted.rows[0].id;
  } else {
    const found = await pool.query<{ id: number; status: string }>(
      'SELECT id, status FROM ingested_files WHERE checksum = $1',
      [checksum],
    );
    const row = found.rows[0];
    if (row === undefined)
      throw new IngestError('INGEST_WRITE_FAILED', `ingested_files lost the record of ${checksum}`, {
        checksum,
        path,
      });
    fileId = row.id;
    if (row.status === 'done') {
      const movedTo =
        processedDir === null
          ? null
          : await moveFile(path, processedDir, `duplicate-${checksum.slice(0, 12)}`);
      // The duplicate has no ingested_files record of its own (the checksum is unique): its entry
      // names it, and the first file through file_id, so the drop is seen and not taken for lost.
      await writeQuarantine(pool, fileId, source, [
        {
          line: null,
          column: null,
          code: 'duplicate-file',
          reason: `duplicate-file: ${path} has the same content (SHA-256 ${checksum.slice(0, 12)}...) as this file, already stored; not read again${movedTo === null ? '' : `, moved to ${movedTo}`}`,
          raw: null,
        },
      ]);
      return { status: 'duplicate', fileId, checksum, movedTo };
    }
    // Interrupted or failed before: redo from the start.
    await pool.query('DELETE FROM quarantine WHERE file_id = $1', [fileId]);
    await pool.query(
      `UPDATE ingested_files SET status = 'processing', path = $2, error = NULL, finished_at = NULL WHERE id = $1`,
      [fileId, path],
    );
  }

  let summary: CsvSummary;
  try {
    summary = await parseCsv(
      createReadStream(path, { highWaterMark: 1 << 16 }),
      format,
      options.tags,
      {
        samples: async (batch) => {
          await sink.write(batch);
          options.onSamples?.(batch);
        },
        quarantine: (entries) => writeQuarantine(pool, fileId, source, entries),
      },
      options.batchSize === undefined ? {} : { batchSize: options.batchSize },
    );
    await sink.flush();
  } catch (error) {
    if (ownSink) await sink.close?.().catch(() => {});
    if (!(error instanceof IngestError) || error.code !== 'INGEST_FILE_UNREADABLE') throw error;
    await pool.query(
      `UPDATE ingested_files SET status = 'failed', error = $2, finished_at = now() WHERE id = $1`,
      [fileId, error.message],
    );
    let movedTo: string | null = null;
    if (rejectedDir !== null) {
      movedTo = await moveFile(path, rejectedDir, `rejected-${checksum.slice(0, 12)}`);
      await writeFile(
        `${movedTo}.reason.txt`,
        `${error.message}\ncode: ${error.code}\ndetails: ${JSON.stringify(error.details)}\nsha256: ${checksum}\n`,
      );
    }
    // A rejected file shows in quarantine too, beside the bad rows of other files.
    const line = error.details.line;
    await writeQuarantine(pool, fileId, source, [
      {
        line: typeof line === 'number' ? line : null,
        column: null,
        code: 'file-rejected',
        reason: `file-rejected: ${error.message}; nothing stored${movedTo === null ? '' : `, moved to ${movedTo}`}`,
        raw: null,
      },
    ]);
    return { status: 'rejected', fileId, checksum, reason: error.message, movedTo };
  }
  if (ownSink) await sink.close?.();
  await pool.query(
    `UPDATE ingested_files SET status = 'done', rows_total = $2, rows_stored = $3, rows_quarantined = $4, finished_at = now() WHERE id = $1`,
    [fileId, summary.rows, summary.samples, summary.quarantined],
  );
  const movedTo =
    processedDir === null ? null : await moveFile(path, processedDir, `${checksum.slice(0, 12)}`);
  return { status: 'done', fileId, checksum, summary, movedTo };
}
