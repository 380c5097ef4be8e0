/**
 * The database side of a CSV file: its ingested_files record (checksum-unique, with the counts
 * of what the store did with its rows) and its quarantine rows, conflicts included.
 */
import type pg from 'pg';
import { IngestError } from '../errors.js';
import type { SampleConflict } from '../types.js';
import type { QuarantineEntry } from './output.js';

/** What the store did with a file's samples. */
export interface FileWriteCounts {
  /** Rows new to the store. */
  readonly stored: number;
  /** Rows identical to one already stored. */
  readonly duplicates: number;
  /** Rows refused: their tag and time already hold another value (the first stored value is kept). */
  readonly conflicts: number;
}

export type FileClaim =
  | { readonly kind: 'new' | 'retry'; readonly fileId: number }
  | { readonly kind: 'done'; readonly fileId: number };

/**
 * Records the file by checksum. 'done': already stored; 'retry': left 'processing' or 'failed'
 * before, so it is read again from the start: its row entries in quarantine are cleared (the
 * read writes them again), but the entries of earlier drops refused whole stay, one per drop.
 */
export async function claimFile(
  pool: pg.Pool,
  file: { source: string; path: string; checksum: string; size: number },
): Promise<FileClaim> {
  const inserted = await pool.query<{ id: number }>(
    `INSERT INTO ingested_files (source, path, checksum, size_bytes) VALUES ($1, $2, $3, $4)
     ON CONFLICT (checksum) DO NOTHING RETURNING id`,
    [file.source, file.path, file.checksum, file.size],
  );
  if (inserted.rows[0] !== undefined) return { kind: 'new', fileId: inserted.rows[0].id };
  const found = await pool.query<{ id: number; status: string }>(
    'SELECT id, status FROM ingested_files WHERE checksum = $1',
    [file.checksum],
  );
  const row = found.rows[0];
  if (row === undefined)
    throw new IngestError('INGEST_WRITE_FAILED', `ingested_files lost the record of ${file.checksum}`, {
      checksum: file.checksum,
      path: file.path,
    });
  if (row.status === 'done') return { kind: 'done', fileId: row.id };
  await pool.query(
    `DELETE FROM quarantine WHERE file_id = $1 AND reason NOT LIKE 'file-rejected:%' AND reason NOT LIKE 'duplicate-file:%'`,
    [row.id],
  );
  await pool.query(
    `UPDATE ingested_files SET status = 'processing', path = $2, error = NULL, finished_at = NULL WHERE id = $1`,
    [row.id, file.path],
  );
  return { kind: 'retry', fileId: row.id };
}

export async function finishFile(
  pool: pg.Pool,
  fileId: number,
  rows: number,
  quarantined: number,
  written: FileWriteCounts,
): Promise<void> {
  await pool.query(
    `UPDATE ingested_files SET status = 'done', rows_total = $2, rows_stored = $3, rows_duplicate = $4,
            rows_conflicting = $5, rows_quarantined = $6, finished_at = now() WHERE id = $1`,
    [fileId, rows, written.stored, written.duplicates, written.conflicts, quarantined],
  );
}

export async function failFile(pool: pg.Pool, fileId: number, message: string): Promise<void> {
  await pool.query(
    `UPDATE ingested_files SET status = 'failed', error = $2, finished_at = now() WHERE id = $1`,
    [fileId, message],
  );
}

export async function writeQuarantine(
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

/** One quarantine entry per refused row: line (its ref), tag, the value kept and the value refused. */
export async function conflictEntries(
  pool: pg.Pool,
  conflicts: readonly SampleConflict[],
): Promise<QuarantineEntry[]> {
  const ids = [...new Set(conflicts.map((c) => c.tagId))];
  const r = await pool.query<{ id: number; name: string }>('SELECT id, name FROM tags WHERE id = ANY($1)', [
    ids,
  ]);
  const names = new Map(r.rows.map((t) => [t.id, t.name]));
  return conflicts.map((c) => {
    const tag = names.get(c.tagId) ?? `tag id ${c.tagId}`;
    const quality = (q: number) => (c.quality === c.storedQuality ? '' : ` (quality ${q})`);
    return {
      line: c.ref ?? null,
      column: tag,
      code: 'conflicting-value',
      reason: `conflicting-value: ${tag} at ${new Date(c.time).toISOString()} already holds ${c.storedValue}${quality(c.storedQuality)}; this file's ${c.value}${quality(c.quality)} is not stored (the first stored value is kept)`,
      raw: null,
    };
  });
}
