/** Ingestion bookkeeping: files taken in (checksum-unique) and quarantined rows. */
import type { Queryable } from './errors.js';

export interface IngestedFileStart {
  readonly source: string;
  readonly path: string;
  /** SHA-256 of the content, hex. */
  readonly checksum: string;
  readonly sizeBytes: number;
}

/** Records a file; when its checksum was seen before, returns that record and alreadyIngested. */
export async function beginIngestedFile(
  db: Queryable,
  file: IngestedFileStart,
): Promise<{ id: number; alreadyIngested: boolean; status: string }> {
  const ins = await db.query<{ id: string }>(
    `INSERT INTO ingested_files (source, path, checksum, size_bytes) VALUES ($1, $2, $3, $4)
     ON CONFLICT (checksum) DO NOTHING RETURNING id::text AS id`,
    [file.source, file.path, file.checksum, file.sizeBytes],
  );
  if (ins.rows[0] !== undefined)
    return { id: Number(ins.rows[0].id), alreadyIngested: false, status: 'processing' };
  const old = await db.query<{ id: string; status: string }>(
    'SELECT id::text AS id, status FROM ingested_files WHERE checksum = $1',
    [file.checksum],
  );
  return { id: Number(old.rows[0]!.id), alreadyIngested: true, status: old.rows[0]!.status };
}

export async function finishIngestedFile(
  db: Queryable,
  id: number,
  outcome: {
    status: 'done' | 'failed';
    rowsTotal?: number;
    rowsStored?: number;
    rowsQuarantined?: number;
    error?: string;
  },
): Promise<void> {
  await db.query(
    `UPDATE ingested_files SET status = $2, rows_total = $3, rows_stored = $4, rows_quarantined = $5, error = $6,
            finished_at = now() WHERE id = $1`,
    [
      id,
      outcome.status,
      outcome.rowsTotal ?? null,
      outcome.rowsStored ?? null,
      outcome.rowsQuarantined ?? null,
      outcome.error ?? null,
    ],
  );
}

export interface QuarantineRow {
  readonly fileId?: number | null;
  readonly source: string;
  readonly line?: number | null;
  readonly column?: string | null;
  readonly reason: string;
  readonly raw?: string | null;
}

export interface StoredQuarantineRow extends QuarantineRow {
  readonly id: number;
  readonly createdAt: Date;
}

export async function writeQuarantine(db: Queryable, rows: readonly QuarantineRow[]): Promise<number> {
  if (rows.length === 0) return 0;
  const r = await db.query(
    `INSERT INTO quarantine (file_id, source, line, column_name, reason, raw)
     SELECT * FROM unnest($1::bigint[], $2::text[], $3::int[], $4::text[], $5::text[], $6::text[])`,
    [
      rows.map((x) => x.fileId ?? null),
      rows.map((x) => x.source),
      rows.map((x) => x.line ?? null),
      rows.map((x) => x.column ?? null),
      rows.map((x) => x.reason),
      rows.map((x) => x.raw ?? null),
    ],
  );
  return r.rowCount ?? 0;
}

/** Newest first; filter by file. */
export async function readQuarantine(
  db: Queryable,
  filter: { fileId?: number; limit?: number } = {},
): Promise<StoredQuarantineRow[]> {
  const r = await db.query<{
    id: string;
    file_id: string | null;
    source: string;
    line: number | null;
    column_name: string | null;
    reason: string;
    raw: string | null;
    created_at: Date;
  }>(
    `SELECT id::text AS id, file_id::text AS file_id, source, line, column_name, reason, raw, created_at FROM quarantine
      WHERE ($1::bigint IS NULL OR file_id = $1) ORDER BY id DESC LIMIT $2`,
    [filter.fileId ?? null, filter.limit ?? 1000],
  );
  return r.rows.map((x) => ({
    id: Number(x.id),
    fileId: x.file_id === null ? null : Number(x.file_id),
    source: x.source,
    line: x.line,
    column: x.column_name,
    reason: x.reason,
    raw: x.raw,
    createdAt: x.created_at,
  }));
}
