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
 * next batch is built while the database is still busy with the current one; SampleWriter
 * writes two batches at once on two connections (the second starts once the first holds
 * its locks, so batches sharing a tag still commit in order).
 */
import { Readable } from 'node:stream';
import { pipeline } from 'node:stream/promises';
import type pg from 'pg';
import { from as copyFrom } from 'pg-copy-streams';
import { mergeIntoBlocks, routePackedRows } from './blocks/route.js';
import { type CompressionMethod, type Compressor, createCompressor } from './compression.js';
import { encodeSamples, type SampleRow } from './copy-binary.js';
import { StoreError } from './errors.js';
import { ensurePartitions, forgetPartitions } from './partitions.js';
import { QUALITY_GOOD, qualityClass } from './quality.js';
import {
  COPY_ROLLUP_STAGE,
  encodeBatchRollups,
  insertStagedSql,
  MERGE_ROLLUP_STAGE,
  mergeRollupRowsSql,
  ROLLUP_STAGE_DDL,
  type SplitRollups,
  type StagedResult,
  splitBatchRollups,
  TAG_LOCK_CLASS,
} from './rollups.js';
import { sqlFloatArray, sqlIntArray, sqlTimeArray } from './sql-literals.js';
import {
  type BatchOutcome,
  carriesRefs,
  conflictOf,
  findRowIndex,
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
   * Batches written at once, each on its own pool connection (default 2; 1 writes one
   * after the other). A batch starts once the one before holds its locks.
   */
  readonly batchesInFlight?: number;
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
   * any wait for the event loop while the caller prepares further batches, and for the
   * locks of tags that the batch in flight before holds. Phases of batches written side by
   * side (batchesInFlight) add up, so their sum can exceed the wall time.
   */
  begin: number;
  /** COPY of the rows (fast path) or COPY to staging plus the insert (staging path, rollups included). */
  copy: number;
  /** Fast path: COPY of the rollups' later buckets. */
  rollups: number;
  /** Merge of the fast path's first buckets, tag_last update and COMMIT (one round trip). */
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

const ROLLUP_COLUMNS = '(tag_id, bucket, min, max, sum, count, last_value, last_time)';

/**
 * Staging path, for a batch with keys at or before a tag's last stored time (or one the
 * fast COPY met stored): COPY to samples_stage, then one statement inserts the new rows,
 * merges them into the rollups and returns the keys stored with another value. Runs inside
 * the batch's transaction, under its per-tag locks.
 * Rows that fall inside a packed block go to mergeIntoBlocks first (their outcome is added to
 * this one's); only the hot rows are staged. When the rows carry refs, the outcome names its
 * duplicates (duplicateRefs).
 */
async function writeStaged(
  client: pg.PoolClient,
  rows: readonly Row[],
  data: Buffer,
  rollups: boolean,
): Promise<Omit<BatchOutcome, 'fast'>> {
  const named = carriesRefs(rows);
  // Rows for ranges already packed are merged into their blocks (blocks/route.ts), the rest staged.
  const routed = await routePackedRows(client, rows);
  const merged = await mergeIntoBlocks(client, routed.packed, { rollups });
  const hot = routed.packed.length === 0 ? rows : routed.hot;
  const outcome: Omit<BatchOutcome, 'fast'> = {
    stored: merged.stored,
    duplicates: merged.duplicates,
    conflicts: [...merged.conflicts],
    ...(named ? { duplicateRefs: merged.duplicateRefs } : {}),
  };
  if (hot.length === 0) return outcome;
  await copyBuffer(
    client,
    'COPY samples_stage (tag_id, time, value, quality) FROM STDIN (FORMAT binary)',
    routed.packed.length === 0 ? data : encodeSamples(routed.hot),
  );
  const r = (await client.query<StagedResult>(insertStagedSql(rollups, named))).rows[0]!;
  // Rows neither inserted nor conflicting were stored with the same value: duplicates.
  const judged = judgeStaged(hot, r);
  outcome.stored += r.n;
  outcome.duplicates += hot.length - r.n - judged.conflicts.length;
  for (const c of judged.conflicts) outcome.conflicts.push(c);
  if (outcome.duplicateRefs !== undefined)
    for (const ref of judged.duplicateRefs) outcome.duplicateRefs.push(ref);
  return outcome;
}

/** The staged rows' conflicts, and (when the statement named the inserted keys) the refs of the duplicates. */
function judgeStaged(
  hot: readonly Row[],
  r: StagedResult,
): { conflicts: WriteConflict[]; duplicateRefs: number[] } {
  const conflicts: WriteConflict[] = [];
  // 1: conflicting, 2: inserted; 0 left: a duplicate.
  const fate = r.ins_tag_ids === undefined ? undefined : new Uint8Array(hot.length);
  const indexOf = (tagId: number, time: number): number => {
    const k = findRowIndex(hot, tagId, time);
    if (k >= 0) return k;
    // Cannot happen while times are whole milliseconds both ways; say so if it does.
    const key = { tagId, time };
    throw new StoreError('STORE_WRITE_FAILED', `staged key ${JSON.stringify(key)} is not in the batch`, key);
  };
  for (let i = 0; i < r.tag_ids.length; i++) {
    const k = indexOf(r.tag_ids[i]!, r.times[i]!);
    if (fate !== undefined) fate[k] = 1;
    conflicts.push(conflictOf(hot[k]!, r.stored_values[i]!, r.stored_qualities[i]!));
  }
  const duplicateRefs: number[] = [];
  if (fate === undefined) return { conflicts, duplicateRefs };
  const insTimes = r.ins_times!;
  r.ins_tag_ids!.forEach((tagId, i) => {
    fate[indexOf(tagId, insTimes[i]!)] = 2;
  });
  for (let k = 0; k < hot.length; k++) {
    const ref = hot[k]!.ref;
    if (fate[k] === 0 && ref !== undefined) duplicateRefs.push(ref);
  }
  return { conflicts, duplicateRefs };
}

const COPY_SAMPLES = 'COPY samples (tag_id, time, value, quality) FROM STDIN (FORMAT binary)';

/**
 * Fast path: COPY straight into samples and the rollups' later buckets (new, since every
 * row is newer than its tag's last stored time: COPY inserts in bulk where an upsert goes
 * row by row). Returns the rows stored and the statements that merge each tag's first
 * buckets (sent with the COMMIT), or undefined when a key was stored after all (rows
 * written around the writer; back to the savepoint, for the staging path). A later bucket
 * stored around the writer takes the batch back to merging every bucket.
 */
async function copyFast(
  client: pg.PoolClient,
  batch: PreparedBatch,
  rollups: boolean,
  lap: (phase: keyof BatchPhaseTimes) => void,
): Promise<{ stored: number; merge: string } | undefined> {
  let stored: number;
  try {
    stored = await copyBuffer(client, COPY_SAMPLES, batch.data);
  } catch (error) {
    if (pgCode(error) !== '23505') throw error;
    await client.query('ROLLBACK TO SAVEPOINT fast');
    lap('copy');
    return undefined;
  }
  lap('copy');
  const split = batch.rollups;
  if (!rollups || split === undefined) return { stored, merge: '' };
  try {
    if (split.minuteRows > 0)
      await copyBuffer(client, `COPY samples_1m ${ROLLUP_COLUMNS} FROM STDIN (FORMAT binary)`, split.minutes);
    if (split.hourRows > 0)
      await copyBuffer(client, `COPY samples_1h ${ROLLUP_COLUMNS} FROM STDIN (FORMAT binary)`, split.hours);
    lap('rollups');
    return { stored, merge: mergeRollupRowsSql(split.head) };
  } catch (error) {
    if (pgCode(error) !== '23505') throw error;
    await client.query('ROLLBACK TO SAVEPOINT fast');
    stored = await copyBuffer(client, COPY_SAMPLES, batch.data);
    await copyBuffer(client, COPY_ROLLUP_STAGE, encodeBatchRollups(batch.sorted));
    await client.query(MERGE_ROLLUP_STAGE);
    lap('rollups');
    return { stored, merge: '' };
  }
}

/** Results of a simple-protocol query (pg returns an array when the text has several statements). */
async function simpleQuery(client: pg.PoolClient, sql: string): Promise<pg.QueryResult[]> {
  const r: pg.QueryResult | pg.QueryResult[] = await client.query(sql);
  return Array.isArray(r) ? r : [r];
}

/**
 * The batch's first round trip: BEGIN, the per-tag locks (sorted, so no deadlock), a
 * savepoint for the fast path, and how many tags have a stored time at or after the batch's
 * first. Separate statements, so the check reads tag_last after the locks are held (each
 * statement of a simple query takes its own snapshot under READ COMMITTED).
 */
function beginSql(batch: PreparedBatch): string {
  return `BEGIN;
    SELECT pg_advisory_xact_lock(${TAG_LOCK_CLASS}, t) FROM unnest(${sqlIntArray(batch.tagIds)}) AS t ORDER BY t;
    SAVEPOINT fast;
    SELECT count(*)::int AS n FROM unnest(${sqlIntArray(batch.tagIds)}, ${sqlTimeArray(batch.firstTimes)}) AS b(tag_id, t)
      JOIN tag_last l USING (tag_id) WHERE l.time >= b.t`;
}

/** The batch's last round trip: rollup merges (if any), tag_last when rows were stored, COMMIT. */
function finishSql(batch: PreparedBatch, merge: string, stored: boolean): string {
  // Nothing new means every key was stored already, and tag_last is at least as late.
  const last = stored
    ? `INSERT INTO tag_last (tag_id, time, value)
       SELECT * FROM unnest(${sqlIntArray(batch.tagIds)}, ${sqlTimeArray(batch.lastTimes)}, ${sqlFloatArray(batch.lastValues)})
       ON CONFLICT (tag_id) DO UPDATE SET time = excluded.time, value = excluded.value WHERE excluded.time > tag_last.time;`
    : '';
  return `${merge}\n${last}\nCOMMIT`;
}

/**
 * The batch's transaction on one connection, in as few round trips as the data allow
 * (fast path: begin, COPY of the rows, COPY of each rollup table, finish).
 */
async function writeInTransaction(
  client: pg.PoolClient,
  batch: PreparedBatch,
  rollups: boolean,
  lap: (phase: keyof BatchPhaseTimes) => void,
  onLocked: () => void,
): Promise<BatchOutcome> {
  const opened = await simpleQuery(client, beginSql(batch));
  const seen = (opened[opened.length - 1]?.rows[0] as { n: number } | undefined)?.n;
  onLocked();
  lap('begin');
  const fast = seen === 0 ? await copyFast(client, batch, rollups, lap) : undefined;
  let outcome: BatchOutcome;
  if (fast !== undefined) {
    outcome = { stored: fast.stored, duplicates: 0, conflicts: [], fast: true };
  } else {
    outcome = { ...(await writeStaged(client, batch.sorted, batch.data, rollups)), fast: false };
    lap('copy');
  }
  await simpleQuery(client, finishSql(batch, fast?.merge ?? '', outcome.stored > 0));
  lap('commit');
  return outcome;
}

async function writePrepared(
  pool: pg.Pool,
  batch: PreparedBatch,
  rollups: boolean,
  phases: BatchPhaseTimes = zeroPhases(),
  onLocked: () => void = () => {},
): Promise<BatchOutcome> {
  if (batch.rows === 0) {
    onLocked();
    return withRepeats({ stored: 0, duplicates: 0, conflicts: [], fast: true }, batch);
  }
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
      return withRepeats(await writeInTransaction(client, batch, rollups, lap, onLocked), batch);
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
  const named = outcome.duplicateRefs !== undefined || r.duplicateRefs.length > 0;
  return {
    ...outcome,
    duplicates: outcome.duplicates + r.duplicates,
    conflicts: outcome.conflicts.concat(r.conflicts),
    ...(named ? { duplicateRefs: (outcome.duplicateRefs ?? []).concat(r.duplicateRefs) } : {}),
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
  private readonly inFlightMax: number;
  private readonly onConflicts: SampleWriterOptions['onConflicts'];
  /** Conflicts of committed batches not yet taken by onConflicts, oldest first. */
  private readonly undelivered: (readonly WriteConflict[])[] = [];
  private delivering = false;
  /** Queued batches being written (the others wait; a committed batch leaves the queue). */
  private readonly started = new Set<PreparedBatch>();
  /** A batch was started and does not hold its locks yet (the next one waits for that). */
  private locking = false;
  private readonly compressors = new Map<number, Compressor>();
  private readonly lastTime = new Map<number, number>();
  private pending: Row[] = [];
  private readonly queue: PreparedBatch[] = [];
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
    this.inFlightMax = options.batchesInFlight ?? 2;
    this.onConflicts = options.onConflicts;
    if (!(this.batchSize >= 1) || !(this.maxQueued >= 1) || !(this.inFlightMax >= 1)) {
      throw new StoreError(
        'STORE_BAD_REQUEST',
        'batchSize, maxQueuedBatches and batchesInFlight must be at least 1',
        {
          ...options,
        },
      );
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
    // A failed batch stays in the queue: flush() is the retry.
    if (this.failure !== undefined && (this.queue.length > 0 || this.undelivered.length > 0)) {
      this.failure = undefined;
      this.start();
      void this.deliver();
    }
    while (this.queue.length > 0 || this.undelivered.length > 0 || this.delivering) {
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
    // Let the database's replies in before the caller prepares the next batch: write()
    // resolves through microtasks only, so a caller writing in a loop would otherwise keep
    // the event loop (and the batch in flight) waiting until the queue is full.
    await new Promise<void>((resolve) => setImmediate(resolve));
  }

  private prepare(rows: Row[]): PreparedBatch {
    const t = performance.now();
    const { rows: sorted, repeats } = sortUnique(rows);
    const batch = prepareBatch(sorted, repeats, this.rollups);
    this.stats.phaseMs.prepare += performance.now() - t;
    return batch;
  }

  /**
   * Starts the oldest waiting batch, unless `inFlightMax` are being written or the last one
   * started does not hold its per-tag locks yet: batches start in order, so a later batch
   * with a shared tag waits for the earlier one's commit (and then finds it in tag_last),
   * while batches of other tags are written side by side on two connections.
   */
  private start(): void {
    if (this.failure !== undefined || this.locking || this.started.size >= this.inFlightMax) return;
    const batch = this.queue.find((b) => !this.started.has(b));
    if (batch === undefined) return;
    this.started.add(batch);
    this.locking = true;
    void this.writeOne(batch);
  }

  private async writeOne(batch: PreparedBatch): Promise<void> {
    let waiting = true;
    const locked = (): void => {
      if (!waiting) return;
      waiting = false;
      this.locking = false;
      this.start();
    };
    try {
      const outcome = await writePrepared(this.pool, batch, this.rollups, this.stats.phaseMs, locked);
      this.queue.splice(this.queue.indexOf(batch), 1);
      this.count(outcome);
      if (outcome.conflicts.length > 0 && this.onConflicts !== undefined) {
        this.undelivered.push(outcome.conflicts);
        void this.deliver();
      }
    } catch (error) {
      this.failure ??= error;
    } finally {
      this.started.delete(batch);
      locked();
      // Wake a waiting write() (which then prepares a batch on this thread) only after the
      // next batch's first round trip is on its way, so the database is not left idle.
      setImmediate(() => {
        this.start();
        this.notify();
      });
    }
  }

  /** Hands committed batches' conflicts to onConflicts, one batch at a time, in order. */
  private async deliver(): Promise<void> {
    if (this.delivering) return;
    this.delivering = true;
    try {
      for (let next = this.undelivered[0]; next !== undefined; next = this.undelivered[0]) {
        await this.onConflicts?.(next);
        this.undelivered.shift();
      }
    } catch (error) {
      this.failure ??= error;
    } finally {
      this.delivering = false;
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
