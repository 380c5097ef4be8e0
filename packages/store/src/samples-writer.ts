/**
 * Batch writer for raw samples, built on binary COPY.
 *
 * Each batch runs in one transaction: per-tag advisory locks (sorted, so no deadlock), a
 * cheap check against tag_last, then either COPY straight into `samples` (every key of the
 * batch is newer than the tag's last stored time) or COPY into a temporary staging table
 * and INSERT ... ON CONFLICT DO NOTHING, which also reports the keys stored already as
 * duplicates or conflicts (write-outcomes.ts). A re-sent batch therefore stores nothing twice;
 * should the fast path meet a key anyway (rows written around the writer), a savepoint
 * takes it back to the staging path. tag_last and the rollups are updated in the same
 * transaction, from the rows that were really new (see rollups.ts): no batch re-reads
 * samples, so the cost of a batch does not grow with the table.
 *
 * The COPY data (and the batch's rollup rows) are encoded when a batch is queued, so the
 * next batch is built while the database is still busy with the current one.
 */
import { Readable } from 'node:stream';
import { pipeline } from 'node:stream/promises';
import type pg from 'pg';
import { from as copyFrom } from 'pg-copy-streams';
import { type CompressionMethod, type Compressor, createCompressor } from './compression.js';
import { encodeSamples, type SampleRow } from './copy-binary.js';
import { StoreError } from './errors.js';
import { ensurePartitions, forgetPartitions } from './partitions.js';
import { QUALITY_GOOD, qualityClass } from './quality.js';
import {
  encodeBatchRollups,
  insertStagedSql,
  MERGE_ROLLUP_STAGE,
  ROLLUP_STAGE_DDL,
  type SplitRollups,
  type StagedResult,
  splitBatchRollups,
  TAG_LOCK_CLASS,
} from './rollups.js';
import {
  type BatchOutcome,
  conflictOf,
  findRow,
  type Repeat,
  resolveRepeats,
  sortUnique,
  type WriteConflict,
} from './write-outcomes.js';

export type { SampleRow } from './copy-binary.js';
export type { BatchOutcome, WriteConflict } from './write-outcomes.js';

export interface SampleInput {
  readonly tagId: number;
  /** Date, or [ms since epoch]; stored to the millisecond (a fraction is truncated). */
  readonly time: Date | number;
  /** As received, in the tag's unit. */
  readonly value: number;
  /** OPC DA quality code as received (QUALITY_GOOD = 192, see quality.ts), a smallint. */
  readonly quality: number;
  /** The caller's reference (CSV line, push item index), echoed in conflicts; never stored. */
  readonly ref?: number;
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
  /**
   * Per-tag compression on write. Only good samples (quality class good, OPC DA bits 7-6 =
   * 11) pass through the compressor; kept points are stored as QUALITY_GOOD. Held points
   * are written on close(), not on flush().
   */
  readonly compression?: ReadonlyMap<number, TagCompression>;
  /** Keep samples_1m / samples_1h up to date (default true). */
  readonly rollups?: boolean;
  /**
   * Called with the conflicts of each batch that has any (rows refused because their key
   * is stored with another value or quality), after the batch committed and before the
   * flush() covering it resolves. Should it throw, flush() rejects and a later flush()
   * hands the same conflicts to it again.
   */
  readonly onConflicts?: (conflicts: readonly WriteConflict[]) => void | Promise<void>;
}

export interface SampleWriterStats {
  /** Rows handed to write(), before compression. */
  rowsOffered: number;
  /** Rows new to the database. */
  rowsStored: number;
  /** Rows whose key was stored (or earlier in the batch) with the same value and quality. */
  rowsDuplicate: number;
  /** Rows refused: key stored (or earlier in the batch) with another value or quality. */
  rowsConflicting: number;
  batches: number;
  /** Batches that went straight into samples. */
  fastBatches: number;
  /** Batches that went through staging and ON CONFLICT DO NOTHING. */
  stagedBatches: number;
  /** Wall time spent per phase of the batches [ms] (for benchmarks and metrics). */
  phaseMs: BatchPhaseTimes;
}

/** Wall time per phase of writing batches [ms]. */
export interface BatchPhaseTimes {
  /** Sorting and encoding the COPY data and rollup rows (in the caller's turn). */
  prepare: number;
  /**
   * Partition checks, connection, BEGIN, advisory locks and the tag_last check; includes
   * any wait for the event loop while the caller prepares further batches.
   */
  begin: number;
  /** COPY of the rows (fast path) or COPY to staging plus the insert (staging path, rollups included). */
  copy: number;
  /** Fast path: COPY of the rollup rows and their merge. */
  rollups: number;
  /** tag_last update and COMMIT. */
  commit: number;
}

function zeroPhases(): BatchPhaseTimes {
  return { prepare: 0, begin: 0, copy: 0, rollups: 0, commit: 0 };
}

type Row = SampleRow;

const SMALLINT_MAX = 32767;

function badSample(s: SampleInput, index: number, time: number, reason: string): StoreError {
  return new StoreError('STORE_BAD_SAMPLE', `sample ${index} (tag ${s.tagId}): ${reason}`, {
    index,
    tagId: s.tagId,
    time,
    value: s.value,
    quality: s.quality,
  });
}

function toRow(s: SampleInput, index: number): Row {
  const time = Math.trunc(typeof s.time === 'number' ? s.time : s.time.getTime());
  const { tagId, value, quality } = s;
  // The checks are written out (no closure per row): this runs for every sample.
  if (!Number.isInteger(tagId) || tagId <= 0 || tagId > 2_147_483_647)
    throw badSample(s, index, time, 'tagId must be a positive int4');
  if (!Number.isFinite(time)) throw badSample(s, index, time, 'time is not a valid instant');
  if (!Number.isFinite(value)) throw badSample(s, index, time, `value ${value} is not a finite number`);
  if (!Number.isInteger(quality) || quality > SMALLINT_MAX || quality < -SMALLINT_MAX - 1)
    throw badSample(s, index, time, 'quality must be a smallint');
  // ref always set (undefined when absent): one object shape for every row.
  return { tagId, time, value, quality, ref: s.ref };
}

/** A batch ready for the database: sorted, unique, encoded. */
interface PreparedBatch {
  readonly rows: number;
  readonly tMin: number;
  readonly tMax: number;
  readonly tagIds: number[];
  /** First time per tag (ISO text, parallel to tagIds), for the tag_last check. */
  readonly firstTimes: string[];
  readonly lastTimes: string[];
  readonly lastValues: number[];
  /** Binary COPY data of the rows. */
  readonly data: Buffer;
  /** The batch's rollup rows for the fast path, when rollups are kept. */
  readonly rollups: SplitRollups | undefined;
  /** The rows themselves, for the staging path's outcomes and the rare rollup fallback. */
  readonly sorted: readonly Row[];
  /** Later rows of keys the batch has more than once (set aside by sortUnique). */
  readonly repeats: readonly Repeat[];
}

function prepareBatch(sorted: readonly Row[], repeats: readonly Repeat[], rollups: boolean): PreparedBatch {
  let tMin = Number.POSITIVE_INFINITY;
  let tMax = Number.NEGATIVE_INFINITY;
  const tagIds: number[] = [];
  const firstTimes: string[] = [];
  const lastTimes: string[] = [];
  const lastValues: number[] = [];
  for (let i = 0; i < sorted.length; i++) {
    const r = sorted[i]!;
    if (r.time < tMin) tMin = r.time;
    if (r.time > tMax) tMax = r.time;
    if (i === 0 || sorted[i - 1]!.tagId !== r.tagId) {
      tagIds.push(r.tagId);
      firstTimes.push(new Date(r.time).toISOString());
    }
    const next = sorted[i + 1];
    if (next === undefined || next.tagId !== r.tagId) {
      lastTimes.push(new Date(r.time).toISOString());
      lastValues.push(r.value);
    }
  }
  return {
    rows: sorted.length,
    tMin,
    tMax,
    tagIds,
    firstTimes,
    lastTimes,
    lastValues,
    data: encodeSamples(sorted),
    rollups: rollups && sorted.length > 0 ? splitBatchRollups(sorted) : undefined,
    sorted,
    repeats,
  };
}

async function copyBuffer(client: pg.PoolClient, sql: string, data: Buffer): Promise<number> {
  const stream = client.query(copyFrom(sql));
  await pipeline(Readable.from([data]), stream);
  return stream.rowCount ?? 0;
}

function pgCode(error: unknown): string | undefined {
  return typeof error === 'object' && error !== null && 'code' in error && typeof error.code === 'string'
    ? error.code
    : undefined;
}

const SAMPLES_STAGE_DDL = `CREATE TEMP TABLE IF NOT EXISTS samples_stage
  (tag_id integer, time timestamptz, value double precision, quality smallint) ON COMMIT DELETE ROWS`;

// Connections whose session already has the staging tables (created outside any
// transaction, so a rolled-back batch cannot take them away behind this cache).
const staged = new WeakSet<pg.PoolClient>();

const STAGE_ROLLUPS =
  'COPY rollup_stage (tag_id, bucket, min, max, sum, count, last_value, last_time, hourly) FROM STDIN (FORMAT binary)';
const ROLLUP_COLUMNS = '(tag_id, bucket, min, max, sum, count, last_value, last_time)';

/**
 * Fast-path rollups: the buckets after each tag's first are new (every row is newer than
 * the tag's last stored time), so they go in by COPY; the first buckets are merged. Should
 * a later bucket exist after all (rollups written around the writer), a savepoint takes
 * the batch back to merging every bucket.
 */
async function writeFastRollups(
  client: pg.PoolClient,
  split: SplitRollups,
  sorted: readonly Row[],
): Promise<void> {
  await client.query('SAVEPOINT rollups');
  try {
    await copyBuffer(client, `COPY samples_1m ${ROLLUP_COLUMNS} FROM STDIN (FORMAT binary)`, split.minutes);
    await copyBuffer(client, `COPY samples_1h ${ROLLUP_COLUMNS} FROM STDIN (FORMAT binary)`, split.hours);
    await copyBuffer(client, STAGE_ROLLUPS, split.head);
  } catch (error) {
    if (pgCode(error) !== '23505') throw error;
    await client.query('ROLLBACK TO SAVEPOINT rollups');
    await copyBuffer(client, STAGE_ROLLUPS, encodeBatchRollups(sorted));
  }
  await client.query(MERGE_ROLLUP_STAGE);
}

/**
 * Staging path, for a batch with keys at or before a tag's last stored time (or one the
 * fast COPY met stored): COPY to samples_stage, then one statement inserts the new rows,
 * merges them into the rollups and returns the keys stored with another value. Runs inside
 * the batch's transaction, under its per-tag locks.
 * Blocks (h4-blocks): routePackedRows(client, rows) goes first here; its packed rows go to
 * mergeIntoBlocks (their outcome added to this one's) and only its hot rows are encoded
 * and staged below.
 */
async function writeStaged(
  client: pg.PoolClient,
  rows: readonly Row[],
  data: Buffer,
  rollups: boolean,
): Promise<Omit<BatchOutcome, 'fast'>> {
  await copyBuffer(
    client,
    'COPY samples_stage (tag_id, time, value, quality) FROM STDIN (FORMAT binary)',
    data,
  );
  const r = (await client.query<StagedResult>(insertStagedSql(rollups))).rows[0]!;
  const conflicts: WriteConflict[] = [];
  for (let i = 0; i < r.tag_ids.length; i++) {
    const row = findRow(rows, r.tag_ids[i]!, r.times[i]!);
    if (row === undefined) {
      // Cannot happen while times are whole milliseconds both ways; say so if it does.
      const key = { tagId: r.tag_ids[i], time: r.times[i] };
      throw new StoreError(
        'STORE_WRITE_FAILED',
        `staged key ${JSON.stringify(key)} is not in the batch`,
        key,
      );
    }
    conflicts.push(conflictOf(row, r.stored_values[i]!, r.stored_qualities[i]!));
  }
  // Rows neither inserted nor conflicting were stored with the same value: duplicates.
  return { stored: r.n, duplicates: rows.length - r.n - conflicts.length, conflicts };
}

/** Fast path: COPY straight into samples; undefined when a key was stored after all. */
async function copyFast(
  client: pg.PoolClient,
  batch: PreparedBatch,
  rollups: boolean,
  lap: (phase: keyof BatchPhaseTimes) => void,
): Promise<number | undefined> {
  await client.query('SAVEPOINT fast');
  let stored: number;
  try {
    stored = await copyBuffer(
      client,
      'COPY samples (tag_id, time, value, quality) FROM STDIN (FORMAT binary)',
      batch.data,
    );
  } catch (error) {
    if (pgCode(error) !== '23505') throw error;
    await client.query('ROLLBACK TO SAVEPOINT fast');
    lap('copy');
    return undefined;
  }
  lap('copy');
  // Every row went in, so the batch's own aggregates are exactly what the rollups gain.
  if (rollups && batch.rollups !== undefined) {
    await writeFastRollups(client, batch.rollups, batch.sorted);
    lap('rollups');
  }
  return stored;
}

/** The batch's transaction on one connection: locks, tag_last check, fast or staging path, tag_last. */
async function writeInTransaction(
  client: pg.PoolClient,
  batch: PreparedBatch,
  rollups: boolean,
  lap: (phase: keyof BatchPhaseTimes) => void,
): Promise<BatchOutcome> {
  await client.query('BEGIN');
  await client.query('SELECT pg_advisory_xact_lock($1, t) FROM unnest($2::int[]) AS t ORDER BY t', [
    TAG_LOCK_CLASS,
    batch.tagIds,
  ]);
  const seen = await client.query<{ n: number }>(
    `SELECT count(*)::int AS n FROM unnest($1::int[], $2::timestamptz[]) AS b(tag_id, t)
       JOIN tag_last l USING (tag_id) WHERE l.time >= b.t`,
    [batch.tagIds, batch.firstTimes],
  );
  lap('begin');
  const copied = seen.rows[0]?.n === 0 ? await copyFast(client, batch, rollups, lap) : undefined;
  let outcome: BatchOutcome;
  if (copied !== undefined) {
    outcome = { stored: copied, duplicates: 0, conflicts: [], fast: true };
  } else {
    outcome = { ...(await writeStaged(client, batch.sorted, batch.data, rollups)), fast: false };
    lap('copy');
  }
  // Nothing new means every key was stored already, and tag_last is at least as late.
  if (outcome.stored > 0) {
    await client.query(
      `INSERT INTO tag_last (tag_id, time, value)
       SELECT * FROM unnest($1::int[], $2::timestamptz[], $3::float8[])
       ON CONFLICT (tag_id) DO UPDATE SET time = excluded.time, value = excluded.value WHERE excluded.time > tag_last.time`,
      [batch.tagIds, batch.lastTimes, batch.lastValues],
    );
  }
  await client.query('COMMIT');
  lap('commit');
  return outcome;
}

async function writePrepared(
  pool: pg.Pool,
  batch: PreparedBatch,
  rollups: boolean,
  phases: BatchPhaseTimes = zeroPhases(),
): Promise<BatchOutcome> {
  if (batch.rows === 0) return withRepeats({ stored: 0, duplicates: 0, conflicts: [], fast: true }, batch);
  let mark = performance.now();
  const lap = (phase: keyof BatchPhaseTimes): void => {
    const now = performance.now();
    phases[phase] += now - mark;
    mark = now;
  };
  for (let attempt = 1; ; attempt++) {
    // Cached per pool: after the first batch of a month these make no query.
    await ensurePartitions(pool, 'samples', batch.tMin, batch.tMax);
    if (rollups) {
      await ensurePartitions(pool, 'samples_1m', batch.tMin, batch.tMax);
      await ensurePartitions(pool, 'samples_1h', batch.tMin, batch.tMax);
    }
    const client = await pool.connect();
    try {
      if (!staged.has(client)) {
        await client.query(SAMPLES_STAGE_DDL);
        await client.query(ROLLUP_STAGE_DDL);
        staged.add(client);
      }
      return withRepeats(await writeInTransaction(client, batch, rollups, lap), batch);
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

/** Adds the outcomes of the batch's repeated keys (decided here, with no query). */
function withRepeats(outcome: BatchOutcome, batch: PreparedBatch): BatchOutcome {
  if (batch.repeats.length === 0) return outcome;
  const r = resolveRepeats(batch.repeats, outcome.conflicts);
  return {
    ...outcome,
    duplicates: outcome.duplicates + r.duplicates,
    conflicts: outcome.conflicts.concat(r.conflicts),
  };
}

/**
 * Writes one batch in one transaction and says what became of its rows (BatchOutcome).
 * Rows may come in any order and with repeated keys (sorted here; the first row of a key
 * is its candidate); times in [ms since epoch].
 */
export async function writeSampleBatch(
  pool: pg.Pool,
  rows: readonly SampleRow[],
  options: { rollups?: boolean } = {},
): Promise<BatchOutcome> {
  const rollups = options.rollups ?? true;
  const { rows: sorted, repeats } = sortUnique(rows);
  return writePrepared(pool, prepareBatch(sorted, repeats, rollups), rollups);
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
    rowsDuplicate: 0,
    rowsConflicting: 0,
    batches: 0,
    fastBatches: 0,
    stagedBatches: 0,
    phaseMs: zeroPhases(),
  };
  private readonly batchSize: number;
  private readonly maxQueued: number;
  private readonly rollups: boolean;
  private readonly onConflicts: SampleWriterOptions['onConflicts'];
  /** Conflicts of a committed batch not yet taken by onConflicts (it threw). */
  private undelivered: readonly WriteConflict[] | undefined;
  private readonly compressors = new Map<number, Compressor>();
  private readonly lastTime = new Map<number, number>();
  private pending: Row[] = [];
  private readonly queue: PreparedBatch[] = [];
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
    this.onConflicts = options.onConflicts;
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
    if (this.compressors.size === 0)
      this.pending = this.pending.length === 0 ? rows : this.pending.concat(rows);
    else for (const row of rows) this.accept(row);
    while (this.pending.length >= this.batchSize) {
      await this.enqueue(this.pending.splice(0, this.batchSize));
    }
  }

  /** Writes everything buffered; resolves when it is committed. */
  async flush(): Promise<void> {
    if (this.pending.length > 0) await this.enqueue(this.pending.splice(0));
    // A failed batch stays at the head of the queue: flush() is the retry.
    if (this.failure !== undefined && (this.queue.length > 0 || this.undelivered !== undefined)) {
      this.failure = undefined;
      this.start();
    }
    while (this.queue.length > 0 || this.undelivered !== undefined || this.running) {
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
      for (const p of c.end())
        this.pending.push({ tagId, time: p.time, value: p.value, quality: QUALITY_GOOD });
    }
    this.closed = true;
    await this.flush();
  }

  private accept(row: Row): void {
    const c = this.compressors.get(row.tagId);
    if (c === undefined) {
      this.pending.push(row);
      return;
    }
    const previous = this.lastTime.get(row.tagId);
    // Compression needs time order; a late or repeated sample is stored as is.
    if (previous !== undefined && row.time <= previous) {
      this.pending.push(row);
      return;
    }
    this.lastTime.set(row.tagId, row.time);
    // Kept points are written as QUALITY_GOOD, so only good samples go through the
    // compressor; uncertain and bad ones are stored as received.
    if (qualityClass(row.quality) !== 'good') {
      this.pending.push(row);
      return;
    }
    for (const p of c.push({ time: row.time, value: row.value })) {
      this.pending.push({ tagId: row.tagId, time: p.time, value: p.value, quality: QUALITY_GOOD });
    }
  }

  private tick(): void {
    if (this.pending.length > 0 && this.queue.length < this.maxQueued) {
      this.queue.push(this.prepare(this.pending.splice(0)));
      this.start();
    }
  }

  private async enqueue(batch: Row[]): Promise<void> {
    while (this.queue.length >= this.maxQueued) {
      if (this.failure !== undefined) throw this.wrapFailure();
      await this.changed();
    }
    this.queue.push(this.prepare(batch));
    this.start();
  }

  private prepare(rows: Row[]): PreparedBatch {
    const t = performance.now();
    const { rows: sorted, repeats } = sortUnique(rows);
    const batch = prepareBatch(sorted, repeats, this.rollups);
    this.stats.phaseMs.prepare += performance.now() - t;
    return batch;
  }

  private start(): void {
    if (this.running || this.failure !== undefined) return;
    this.running = true;
    void this.run();
  }

  private async run(): Promise<void> {
    try {
      for (;;) {
        if (this.undelivered !== undefined) {
          await this.onConflicts?.(this.undelivered);
          this.undelivered = undefined;
        }
        const batch = this.queue[0];
        if (batch === undefined) break;
        const outcome = await writePrepared(this.pool, batch, this.rollups, this.stats.phaseMs);
        this.queue.shift();
        this.count(outcome);
        if (outcome.conflicts.length > 0 && this.onConflicts !== undefined)
          this.undelivered = outcome.conflicts;
        this.notify();
      }
    } catch (error) {
      this.failure = error;
    } finally {
      this.running = false;
      this.notify();
    }
  }

  private count(outcome: BatchOutcome): void {
    const s = this.stats;
    s.batches++;
    s.rowsStored += outcome.stored;
    s.rowsDuplicate += outcome.duplicates;
    s.rowsConflicting += outcome.conflicts.length;
    if (outcome.fast) s.fastBatches++;
    else s.stagedBatches++;
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
