/**
 * Batch writer for raw samples, built on COPY.
 *
 * Each batch runs in one transaction: per-tag advisory locks (sorted, so no deadlock), a
 * cheap check against tag_last, then either COPY straight into `samples` (every key of the
 * batch is newer than the tag's last stored time) or COPY into a temporary staging table
 * and INSERT ... ON CONFLICT DO NOTHING. A re-sent batch therefore stores nothing twice;
 * should the fast path meet a key anyway (rows written around the writer), a savepoint
 * takes it back to the staging path. tag_last and the rollups are updated in the same
 * transaction.
 */
import { Readable } from 'node:stream';
import { pipeline } from 'node:stream/promises';
import type pg from 'pg';
import { from as copyFrom } from 'pg-copy-streams';
import { type CompressionMethod, type Compressor, createCompressor } from './compression.js';
import { StoreError } from './errors.js';
import { ensurePartitions, forgetPartitions } from './partitions.js';
import { HOUR_MS, MINUTE_MS, refreshHourRollups, refreshMinuteRollups, touchedBuckets } from './rollups.js';

export interface SampleInput {
  readonly tagId: number;
  /** Date, or [ms since epoch]. */
  readonly time: Date | number;
  /** As received, in the tag's unit. */
  readonly value: number;
  /** Quality code as received (0 = good), a smallint. */
  readonly quality: number;
}

export interface TagCompression {
  readonly method: CompressionMethod;
  /** Error bound in the tag's unit. */
  readonly deviation: number;
}

export interface SampleWriterOptions {
  /** Rows per COPY batch (default 20,000). */
  readonly batchSize?: number;
  /** Buffered rows are written at least this often [ms] (default 1000; 0 = only on flush). */
  readonly flushIntervalMs?: number;
  /** Batches waiting for the database before write() blocks (default 4). */
  readonly maxQueuedBatches?: number;
  /** Per-tag compression on write. Held points are written on close(), not on flush(). */
  readonly compression?: ReadonlyMap<number, TagCompression>;
  /** Keep samples_1m / samples_1h up to date (default true). */
  readonly rollups?: boolean;
}

export interface SampleWriterStats {
  /** Rows handed to write(), before compression. */
  rowsOffered: number;
  /** Rows new to the database. */
  rowsStored: number;
  batches: number;
  /** Batches that went straight into samples. */
  fastBatches: number;
  /** Batches that went through staging and ON CONFLICT DO NOTHING. */
  stagedBatches: number;
}

interface Row {
  tagId: number;
  time: number;
  value: number;
  quality: number;
}

/** Advisory-lock class for per-tag write locks (an arbitrary constant of ours). */
const TAG_LOCK_CLASS = 0x15e7;
const SMALLINT_MAX = 32767;

function toRow(s: SampleInput, index: number): Row {
  const time = typeof s.time === 'number' ? s.time : s.time.getTime();
  const bad = (reason: string): StoreError =>
    new StoreError('STORE_BAD_SAMPLE', `sample ${index} (tag ${s.tagId}): ${reason}`, {
      index,
      tagId: s.tagId,
      time,
      value: s.value,
      quality: s.quality,
    });
  if (!Number.isInteger(s.tagId) || s.tagId <= 0 || s.tagId > 2 ** 31 - 1)
    throw bad('tagId must be a positive int4');
  if (!Number.isFinite(time)) throw bad('time is not a valid instant');
  if (!Number.isFinite(s.value)) throw bad(`value ${s.value} is not a finite number`);
  if (!Number.isInteger(s.quality) || Math.abs(s.quality) > SMALLINT_MAX)
    throw bad('quality must be a smallint');
  return { tagId: s.tagId, time, value: s.value, quality: s.quality };
}

/** Sort by (tag, time) and drop repeated keys inside the batch (first one wins, as in the table). */
function sortUnique(rows: Row[]): Row[] {
  rows.sort((a, b) => a.tagId - b.tagId || a.time - b.time);
  const out: Row[] = [];
  for (const r of rows) {
    const prev = out[out.length - 1];
    if (prev === undefined || prev.tagId !== r.tagId || prev.time !== r.time) out.push(r);
  }
  return out;
}

function* copyChunks(rows: readonly Row[]): Generator<string> {
  let chunk = '';
  for (const r of rows) {
    // String(number) is the shortest text that round-trips a double exactly.
    chunk += `${r.tagId}\t${new Date(r.time).toISOString()}\t${r.value}\t${r.quality}\n`;
    if (chunk.length > 65_536) {
      yield chunk;
      chunk = '';
    }
  }
  if (chunk !== '') yield chunk;
}

async function copyInto(client: pg.PoolClient, table: string, rows: readonly Row[]): Promise<number> {
  const stream = client.query(copyFrom(`COPY ${table} (tag_id, time, value, quality) FROM STDIN`));
  await pipeline(Readable.from(copyChunks(rows)), stream);
  return stream.rowCount ?? 0;
}

function pgCode(error: unknown): string | undefined {
  return typeof error === 'object' && error !== null && 'code' in error && typeof error.code === 'string'
    ? error.code
    : undefined;
}

/** Writes one sorted, de-duplicated batch; returns [rows stored, whether the fast path was used]. */
export async function writeSampleBatch(
  pool: pg.Pool,
  rows: readonly Row[],
  options: { rollups?: boolean } = {},
): Promise<{ stored: number; fast: boolean }> {
  if (rows.length === 0) return { stored: 0, fast: true };
  let tMin = Number.POSITIVE_INFINITY;
  let tMax = Number.NEGATIVE_INFINITY;
  const firstByTag = new Map<number, number>();
  const lastByTag = new Map<number, Row>();
  for (const r of rows) {
    if (r.time < tMin) tMin = r.time;
    if (r.time > tMax) tMax = r.time;
    if (!firstByTag.has(r.tagId)) firstByTag.set(r.tagId, r.time);
    lastByTag.set(r.tagId, r);
  }
  const tagIds = [...firstByTag.keys()];
  const rollups = options.rollups ?? true;

  for (let attempt = 1; ; attempt++) {
    await ensurePartitions(pool, 'samples', tMin, tMax);
    if (rollups) {
      await ensurePartitions(pool, 'samples_1m', tMin, tMax);
      await ensurePartitions(pool, 'samples_1h', tMin, tMax);
    }
    const client = await pool.connect();
    try {
      await client.query('BEGIN');
      await client.query('SELECT pg_advisory_xact_lock($1, t) FROM unnest($2::int[]) AS t ORDER BY t', [
        TAG_LOCK_CLASS,
        tagIds,
      ]);
      const seen = await client.query<{ n: number }>(
        `SELECT count(*)::int AS n FROM unnest($1::int[], $2::timestamptz[]) AS b(tag_id, t)
           JOIN tag_last l USING (tag_id) WHERE l.time >= b.t`,
        [tagIds, tagIds.map((id) => new Date(firstByTag.get(id)!).toISOString())],
      );
      let fast = seen.rows[0]?.n === 0;
      let stored = 0;
      if (fast) {
        await client.query('SAVEPOINT fast');
        try {
          stored = await copyInto(client, 'samples', rows);
        } catch (error) {
          if (pgCode(error) !== '23505') throw error;
          await client.query('ROLLBACK TO SAVEPOINT fast');
          fast = false;
        }
      }
      if (!fast) {
        await client.query(
          `CREATE TEMP TABLE IF NOT EXISTS samples_stage
             (tag_id integer, time timestamptz, value double precision, quality smallint) ON COMMIT DELETE ROWS`,
        );
        await copyInto(client, 'samples_stage', rows);
        const ins = await client.query(
          'INSERT INTO samples SELECT tag_id, time, value, quality FROM samples_stage ORDER BY tag_id, time ON CONFLICT DO NOTHING',
        );
        stored = ins.rowCount ?? 0;
      }
      const last = [...lastByTag.values()];
      await client.query(
        `INSERT INTO tag_last (tag_id, time, value)
         SELECT * FROM unnest($1::int[], $2::timestamptz[], $3::float8[])
         ON CONFLICT (tag_id) DO UPDATE SET time = excluded.time, value = excluded.value WHERE excluded.time > tag_last.time`,
        [last.map((r) => r.tagId), last.map((r) => new Date(r.time).toISOString()), last.map((r) => r.value)],
      );
      if (rollups && stored > 0) {
        const ids = rows.map((r) => r.tagId);
        const times = rows.map((r) => r.time);
        await refreshMinuteRollups(client, touchedBuckets(ids, times, MINUTE_MS));
        await refreshHourRollups(client, touchedBuckets(ids, times, HOUR_MS));
      }
      await client.query('COMMIT');
      return { stored, fast };
    } catch (error) {
      await client.query('ROLLBACK').catch(() => {});
      // 23514: "no partition of relation found for row": a partition was dropped behind our cache.
      if (pgCode(error) === '23514' && attempt === 1) {
        forgetPartitions(pool);
        continue;
      }
      throw error;
    } finally {
      client.release();
    }
  }
}

/**
 * Buffers samples and writes them in batches. write() resolves once the samples are
 * accepted into the bounded queue (it waits when the database is behind); flush()
 * resolves once everything written so far is committed; close() also ends compression.
 */
export class SampleWriter {
  readonly stats: SampleWriterStats = {
    rowsOffered: 0,
    rowsStored: 0,
    batches: 0,
    fastBatches: 0,
    stagedBatches: 0,
  };
  private readonly batchSize: number;
  private readonly maxQueued: number;
  private readonly rollups: boolean;
  private readonly compressors = new Map<number, Compressor>();
  private readonly lastTime = new Map<number, number>();
  private pending: Row[] = [];
  private readonly queue: Row[][] = [];
  private running = false;
  private failure: unknown;
  private closed = false;
  private waiters: (() => void)[] = [];
  private readonly timer: NodeJS.Timeout | undefined;

  constructor(
    private readonly pool: pg.Pool,
    options: SampleWriterOptions = {},
  ) {
    this.batchSize = options.batchSize ?? 20_000;
    this.maxQueued = options.maxQueuedBatches ?? 4;
    this.rollups = options.rollups ?? true;
    if (!(this.batchSize >= 1) || !(this.maxQueued >= 1)) {
      throw new StoreError('STORE_BAD_REQUEST', 'batchSize and maxQueuedBatches must be at least 1', {
        ...options,
      });
    }
    for (const [tagId, c] of options.compression ?? [])
      this.compressors.set(tagId, createCompressor(c.method, c.deviation));
    const interval = options.flushIntervalMs ?? 1000;
    if (interval > 0) {
      this.timer = setInterval(() => this.tick(), interval);
      this.timer.unref();
    }
  }

  async write(samples: readonly SampleInput[]): Promise<void> {
    if (this.closed) throw new StoreError('STORE_WRITER_CLOSED', 'the sample writer is closed');
    const rows = samples.map(toRow);
    this.stats.rowsOffered += rows.length;
    for (const row of rows) this.accept(row);
    while (this.pending.length >= this.batchSize) {
      await this.enqueue(this.pending.splice(0, this.batchSize));
    }
  }

  /** Writes everything buffered; resolves when it is committed. */
  async flush(): Promise<void> {
    if (this.pending.length > 0) await this.enqueue(this.pending.splice(0));
    // A failed batch stays at the head of the queue: flush() is the retry.
    if (this.failure !== undefined && this.queue.length > 0) {
      this.failure = undefined;
      this.start();
    }
    while (this.queue.length > 0 || this.running) {
      if (this.failure !== undefined) throw this.wrapFailure();
      await this.changed();
    }
    if (this.failure !== undefined) throw this.wrapFailure();
  }

  /** Ends compression (writing the points it held), flushes, and stops the timer. */
  async close(): Promise<void> {
    if (this.closed) return;
    if (this.timer !== undefined) clearInterval(this.timer);
    for (const [tagId, c] of this.compressors) {
      for (const p of c.end()) this.pending.push({ tagId, time: p.time, value: p.value, quality: 0 });
    }
    this.closed = true;
    await this.flush();
  }

  private accept(row: Row): void {
    const c = this.compressors.get(row.tagId);
    const previous = this.lastTime.get(row.tagId);
    // Compression needs time order; a late or repeated sample is stored as is.
    if (c === undefined || (previous !== undefined && row.time <= previous)) {
      this.pending.push(row);
      return;
    }
    this.lastTime.set(row.tagId, row.time);
    // Kept points are written as good (quality 0), so only good samples go through the compressor.
    if (row.quality !== 0) {
      this.pending.push(row);
      return;
    }
    for (const p of c.push({ time: row.time, value: row.value })) {
      this.pending.push({ tagId: row.tagId, time: p.time, value: p.value, quality: 0 });
    }
  }

  private tick(): void {
    if (this.pending.length > 0 && this.queue.length < this.maxQueued) {
      this.queue.push(sortUnique(this.pending.splice(0)));
      this.start();
    }
  }

  private async enqueue(batch: Row[]): Promise<void> {
    while (this.queue.length >= this.maxQueued) {
      if (this.failure !== undefined) throw this.wrapFailure();
      await this.changed();
    }
    this.queue.push(sortUnique(batch));
    this.start();
  }

  private start(): void {
    if (this.running || this.failure !== undefined) return;
    this.running = true;
    void this.run();
  }

  private async run(): Promise<void> {
    try {
      while (this.queue.length > 0) {
        const batch = this.queue[0]!;
        const { stored, fast } = await writeSampleBatch(this.pool, batch, { rollups: this.rollups });
        this.queue.shift();
        this.stats.batches++;
        this.stats.rowsStored += stored;
        if (fast) this.stats.fastBatches++;
        else this.stats.stagedBatches++;
        this.notify();
      }
    } catch (error) {
      this.failure = error;
    } finally {
      this.running = false;
      this.notify();
    }
  }

  private wrapFailure(): StoreError {
    const cause = this.failure;
    const reason = cause instanceof Error ? cause.message : String(cause);
    return new StoreError(
      'STORE_WRITE_FAILED',
      `writing samples failed (${this.queue.length} batch(es) kept for retry by flush()): ${reason}`,
      { queuedBatches: this.queue.length },
      { cause },
    );
  }

  private changed(): Promise<void> {
    return new Promise((resolve) => this.waiters.push(resolve));
  }

  private notify(): void {
    const w = this.waiters;
    this.waiters = [];
    for (const resolve of w) resolve();
  }
}
