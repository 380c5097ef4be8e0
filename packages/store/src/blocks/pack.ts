/**
 * The pack: closed ranges of the hot `samples` table, older than an age (default 2 days,
 * whole UTC days), become compressed blocks (one per tag and UTC day, at most
 * MAX_BLOCK_SAMPLES each). Units of work, each one transaction under the writers' per-tag
 * advisory locks (TAG_LOCK_CLASS), so a key is hot or packed, never both, never lost:
 *  - a monthly partition wholly before the cutoff: every tag in it locked, the partition
 *    locked against inserts, its rows read in chunks of tags, blocks written, then the
 *    partition TRUNCATEd (no dead tuples, no row-by-row DELETE);
 *  - the part before the cutoff of the partition holding it: per chunk of tags, blocks
 *    written and that range DELETEd.
 * A day that already has a block (late rows that fell between blocks) is merged with it.
 */
import { decodeBlock } from '@isentrope/codec';
import type pg from 'pg';
import { listPartitions, type PartitionInfo } from '../partitions.js';
import { TAG_LOCK_CLASS } from '../rollups.js';
import { inTransaction } from '../transaction.js';
import {
  type BlockRow,
  blockRow,
  COPY_BLOCKS,
  cutBlocks,
  DAY_US,
  encodeBlockRows,
  MAX_BLOCK_SAMPLES,
} from './block-rows.js';
import { concatColumns, mergeDisjoint, sortedByTime, type UsColumns } from './columns.js';
import { copyIn } from './copy-in.js';
import { takeTruncateGuard } from './locks.js';
import { decodeSeriesCopy, runCopyOut, seriesCopySql } from './series-copy.js';

export const DEFAULT_PACK_AGE_MS = 2 * 86_400_000;
const DAY_MS = 86_400_000;

export interface PackOptions {
  /** Now [ms]; default Date.now(). */
  readonly nowMs?: number;
  /** Samples older than this [ms] are packed, in whole UTC days (default 2 days). */
  readonly olderThanMs?: number;
  readonly maxBlockSamples?: number;
  /** Hot rows read per chunk of tags, about (default 2,000,000): bounds the memory of a unit. */
  readonly rowsPerChunk?: number;
  readonly onProgress?: (progress: PackProgress) => void;
}

export interface PackProgress {
  /** The partition, and whether it was truncated (whole) or a range of it deleted. */
  readonly partition: string;
  readonly whole: boolean;
  readonly tags: number;
  readonly rowsRead: number;
  readonly blocksWritten: number;
  readonly rowsRemoved: number;
  readonly ms: number;
}

export interface PackReport {
  units: number;
  rowsRead: number;
  blocksWritten: number;
  /** Existing blocks re-encoded with late rows of their day. */
  blocksMerged: number;
  rowsRemoved: number;
  partitionsTruncated: string[];
  ms: number;
  /** Milliseconds spent per phase, for the bench. */
  phases: { read: number; encode: number; write: number; remove: number };
}

/** Start of the UTC day [ms] before which samples are packed. */
export function packCutoff(nowMs: number, olderThanMs: number): number {
  return Math.floor((nowMs - olderThanMs) / DAY_MS) * DAY_MS;
}

/** Distinct tags of a partition with rows before `beforeMs`, by a loose index scan on its key. */
async function tagsOf(client: pg.ClientBase, partition: string, beforeMs: number): Promise<number[]> {
  const before = new Date(beforeMs).toISOString();
  const res = await client.query<{ tag_id: number }>(
    `WITH RECURSIVE t AS (
       (SELECT tag_id FROM ${partition} WHERE time < $1 ORDER BY tag_id LIMIT 1)
       UNION ALL
       SELECT (SELECT tag_id FROM ${partition} WHERE tag_id > t.tag_id AND time < $1 ORDER BY tag_id LIMIT 1) FROM t WHERE t.tag_id IS NOT NULL)
     SELECT tag_id FROM t WHERE tag_id IS NOT NULL`,
    [before],
  );
  return res.rows.map((r) => r.tag_id);
}

async function lockTags(client: pg.ClientBase, tags: readonly number[]): Promise<void> {
  await client.query('SELECT pg_advisory_xact_lock($1, t) FROM unnest($2::int[]) AS t ORDER BY t', [
    TAG_LOCK_CLASS,
    [...tags],
  ]);
}

/** Chunks of tags holding about `rowsPerChunk` rows each, from the planner's row estimate. */
async function tagChunks(
  client: pg.ClientBase,
  partition: string,
  tags: number[],
  rowsPerChunk: number,
): Promise<number[][]> {
  const est = await client.query<{ n: number }>(
    `SELECT reltuples::float8 AS n FROM pg_class WHERE oid = $1::regclass`,
    [partition],
  );
  const rows = est.rows[0]?.n ?? -1;
  const perTag = rows > 0 ? rows / Math.max(1, tags.length) : rowsPerChunk / 16;
  const size = Math.max(1, Math.floor(rowsPerChunk / Math.max(1, perTag)));
  const out: number[][] = [];
  for (let i = 0; i < tags.length; i += size) out.push(tags.slice(i, i + size));
  return out;
}

interface ChunkCounts {
  rowsRead: number;
  blocksWritten: number;
  blocksMerged: number;
}

/** The tag's stored blocks that start on a UTC day holding any of the given times, decoded. */
async function blocksOnDays(
  client: pg.ClientBase,
  tagId: number,
  days: readonly number[],
): Promise<{ keys: string[]; columns: UsColumns[] }> {
  const res = await client.query<{ key: string; payload: Buffer }>(
    `SELECT first_time::text AS key, payload FROM sample_blocks b JOIN unnest($2::timestamptz[]) AS d(day)
         ON b.first_time >= d.day AND b.first_time < d.day + interval '1 day'
      WHERE b.tag_id = $1 ORDER BY b.first_time`,
    [tagId, days.map((d) => new Date(d / 1000).toISOString())],
  );
  return { keys: res.rows.map((r) => r.key), columns: res.rows.map((r) => decodeBlock(r.payload)) };
}

/** UTC day starts [µs] of sorted times. */
function daysOf(times: Float64Array): number[] {
  const out: number[] = [];
  for (let i = 0; i < times.length; i++) {
    const d = Math.floor((times[i] as number) / DAY_US) * DAY_US;
    if (out[out.length - 1] !== d) out.push(d);
  }
  return out;
}

/**
 * Packs the hot rows of `tags` in [fromMs, toMs) of one partition into blocks (the rows stay;
 * the caller removes them in the same transaction).
 */
async function packChunk(
  client: pg.ClientBase,
  partition: string,
  tags: readonly number[],
  fromMs: number,
  toMs: number,
  report: PackReport,
  maxBlockSamples: number,
): Promise<ChunkCounts> {
  let t = performance.now();
  const copy = decodeSeriesCopy(
    await runCopyOut(client, seriesCopySql(tags, fromMs, toMs, { table: partition, blocks: false })),
  );
  report.phases.read += performance.now() - t;
  t = performance.now();
  const counts: ChunkCounts = { rowsRead: 0, blocksWritten: 0, blocksMerged: 0 };
  const rows: BlockRow[] = [];
  const replaced: { tag: number; key: string }[] = [];
  // Which days already have blocks, for all the chunk's tags in one query.
  const existing = await client.query<{ tag_id: number }>(
    `SELECT DISTINCT tag_id FROM sample_blocks WHERE tag_id = ANY($1::int[]) AND first_time >= $2 AND first_time < $3`,
    [[...tags], new Date(fromMs).toISOString(), new Date(toMs).toISOString()],
  );
  const withBlocks = new Set(existing.rows.map((r) => r.tag_id));
  for (const [tag, raw] of copy.hot) {
    let hot = sortedByTime(raw);
    counts.rowsRead += hot.times.length;
    if (withBlocks.has(tag)) {
      const old = await blocksOnDays(client, tag, daysOf(hot.times));
      if (old.columns.length > 0) {
        hot = mergeDisjoint(hot, concatColumns(old.columns));
        counts.blocksMerged += old.keys.length;
        for (const key of old.keys) replaced.push({ tag, key });
      }
    }
    for (const part of cutBlocks(hot, maxBlockSamples)) rows.push(blockRow(tag, part));
  }
  report.phases.encode += performance.now() - t;
  t = performance.now();
  if (replaced.length > 0) {
    await client.query(
      `DELETE FROM sample_blocks b USING unnest($1::int[], $2::timestamptz[]) AS r(tag_id, first_time)
        WHERE b.tag_id = r.tag_id AND b.first_time = r.first_time`,
      [replaced.map((r) => r.tag), replaced.map((r) => r.key)],
    );
  }
  if (rows.length > 0) await copyIn(client, COPY_BLOCKS, encodeBlockRows(rows));
  counts.blocksWritten = rows.length;
  report.phases.write += performance.now() - t;
  return counts;
}

function addCounts(report: PackReport, c: ChunkCounts): void {
  report.rowsRead += c.rowsRead;
  report.blocksWritten += c.blocksWritten;
  report.blocksMerged += c.blocksMerged;
}

/** One transaction: the whole partition packed and truncated. Returns false when tags appeared meanwhile (retry). */
async function packWhole(
  pool: pg.Pool,
  p: PartitionInfo,
  o: Required<Omit<PackOptions, 'onProgress' | 'nowMs' | 'olderThanMs'>>,
  report: PackReport,
  onProgress?: (p: PackProgress) => void,
): Promise<boolean> {
  const started = performance.now();
  const before = { ...report, phases: { ...report.phases } };
  return inTransaction(pool, async (client) => {
    const tags = await tagsOf(client, p.name, p.to.getTime());
    if (tags.length === 0) return true;
    await lockTags(client, tags);
    // No insert into the month from here on; then the tag set cannot grow behind the locks.
    await client.query(`LOCK TABLE ${p.name} IN EXCLUSIVE MODE`);
    const now = await tagsOf(client, p.name, p.to.getTime());
    const locked = new Set(tags);
    if (now.some((t) => !locked.has(t))) {
      await client.query('ROLLBACK');
      await client.query('BEGIN');
      return false;
    }
    for (const chunk of await tagChunks(client, p.name, now, o.rowsPerChunk)) {
      addCounts(
        report,
        await packChunk(client, p.name, chunk, p.from.getTime(), p.to.getTime(), report, o.maxBlockSamples),
      );
    }
    const t = performance.now();
    const removed = report.rowsRead - before.rowsRead;
    await takeTruncateGuard(client);
    await client.query(`TRUNCATE ${p.name}`);
    report.phases.remove += performance.now() - t;
    report.rowsRemoved += removed;
    report.partitionsTruncated.push(p.name);
    report.units++;
    onProgress?.({
      partition: p.name,
      whole: true,
      tags: now.length,
      rowsRead: removed,
      blocksWritten: report.blocksWritten - before.blocksWritten,
      rowsRemoved: removed,
      ms: performance.now() - started,
    });
    return true;
  });
}

/** The part [p.from, cutoff) of a partition, one transaction per chunk of tags, rows DELETEd. */
async function packRange(
  pool: pg.Pool,
  p: PartitionInfo,
  cutoff: number,
  o: Required<Omit<PackOptions, 'onProgress' | 'nowMs' | 'olderThanMs'>>,
  report: PackReport,
  onProgress?: (p: PackProgress) => void,
): Promise<void> {
  const from = p.from.getTime();
  const tags = await inTransaction(pool, (c) => tagsOf(c, p.name, cutoff));
  if (tags.length === 0) return;
  const chunks = await inTransaction(pool, (c) => tagChunks(c, p.name, tags, o.rowsPerChunk));
  for (const chunk of chunks) {
    const started = performance.now();
    const before = report.rowsRead;
    const blocksBefore = report.blocksWritten;
    await inTransaction(pool, async (client) => {
      await lockTags(client, chunk);
      addCounts(report, await packChunk(client, p.name, chunk, from, cutoff, report, o.maxBlockSamples));
      const t = performance.now();
      const del = await client.query(
        `DELETE FROM ${p.name} WHERE tag_id = ANY($1::int[]) AND time >= $2 AND time < $3`,
        [chunk, p.from.toISOString(), new Date(cutoff).toISOString()],
      );
      report.phases.remove += performance.now() - t;
      report.rowsRemoved += del.rowCount ?? 0;
    });
    report.units++;
    const read = report.rowsRead - before;
    onProgress?.({
      partition: p.name,
      whole: false,
      tags: chunk.length,
      rowsRead: read,
      blocksWritten: report.blocksWritten - blocksBefore,
      rowsRemoved: read,
      ms: performance.now() - started,
    });
  }
}

/** Packs every closed range of samples older than the age; see the module comment. */
export async function packSamples(pool: pg.Pool, options: PackOptions = {}): Promise<PackReport> {
  const started = performance.now();
  const cutoff = packCutoff(options.nowMs ?? Date.now(), options.olderThanMs ?? DEFAULT_PACK_AGE_MS);
  const o = {
    maxBlockSamples: options.maxBlockSamples ?? MAX_BLOCK_SAMPLES,
    rowsPerChunk: options.rowsPerChunk ?? 2_000_000,
  };
  const report: PackReport = {
    units: 0,
    rowsRead: 0,
    blocksWritten: 0,
    blocksMerged: 0,
    rowsRemoved: 0,
    partitionsTruncated: [],
    ms: 0,
    phases: { read: 0, encode: 0, write: 0, remove: 0 },
  };
  for (const p of await listPartitions(pool, 'samples')) {
    if (p.to.getTime() <= cutoff) {
      // A writer may add a tag to the month between the listing and the lock: then again.
      for (let attempt = 0; attempt < 5; attempt++)
        if (await packWhole(pool, p, o, report, options.onProgress)) break;
    } else if (p.from.getTime() < cutoff) {
      await packRange(pool, p, cutoff, o, report, options.onProgress);
    }
  }
  report.ms = performance.now() - started;
  return report;
}
