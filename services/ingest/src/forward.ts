/**
 * Store-and-forward for streaming sources: samples are gathered for a short interval and
 * written straight to the store while it answers; when a write fails (database down),
 * that batch and every later one go to the on-disk buffer, which a background loop drains
 * oldest first with backoff. New samples keep going to the buffer until it is empty, so
 * the store receives them in the order they came.
 */
import { type SampleRow, writeSampleBatch } from '@isentrope/store';
import type pg from 'pg';
import type { Logger } from 'pino';
import type { DiskBuffer } from './buffer.js';
import { errorMessage } from './errors.js';
import type { SourceMetrics } from './metrics.js';
import { groupsBySpan } from './span.js';
import type { CommittedSampleSink, Sample, SampleConflict, SampleSink, WriteReport } from './types.js';

/**
 * Keeps a lost database connection from crashing the process: pg emits 'error' on a
 * checked-out client whose server went away between queries, and an 'error' event with
 * no listener is thrown. Queries in flight still reject, so nothing is acknowledged.
 */
export function guardPool(pool: pg.Pool): pg.Pool {
  pool.on('error', () => {});
  pool.on('connect', (client) => {
    client.on('error', () => {});
  });
  return pool;
}

/**
 * A sink whose write() resolves only once the rows are committed, and that keeps nothing
 * in memory when it fails (the store's writeSampleBatch per chunk, each chunk within a bounded
 * span of time, see span.ts). Used by store-and-forward and HTTP push.
 */
export class CommittedSink implements CommittedSampleSink {
  constructor(
    private readonly pool: pg.Pool,
    private readonly chunk = 20_000,
  ) {}

  async write(samples: readonly Sample[]): Promise<WriteReport> {
    let stored = 0;
    let duplicates = 0;
    const conflicts: SampleConflict[] = [];
    // The duplicates are named when every chunk that has any names them (a chunk without
    // duplicates, such as one on the store's fast path, names none and needs no list).
    let duplicateRefs: number[] | undefined = [];
    for (const group of groupsBySpan(samples)) {
      for (let i = 0; i < group.length; i += this.chunk) {
        const outcome = await writeSampleBatch(this.pool, group.slice(i, i + this.chunk).map(toRow));
        stored += outcome.stored;
        duplicates += outcome.duplicates;
        for (const c of outcome.conflicts) conflicts.push(c);
        if (outcome.duplicateRefs !== undefined)
          for (const ref of outcome.duplicateRefs) duplicateRefs?.push(ref);
        else if (outcome.duplicates > 0) duplicateRefs = undefined;
      }
    }
    return duplicateRefs === undefined
      ? { stored, duplicates, conflicts }
      : { stored, duplicates, conflicts, duplicateRefs };
  }

  async flush(): Promise<void> {}
}

function toRow(s: Sample): SampleRow {
  return { tagId: s.tagId, time: s.time.getTime(), value: s.value, quality: s.quality, ref: s.ref };
}

export interface ForwarderOptions {
  readonly sink: SampleSink;
  readonly buffer: DiskBuffer;
  readonly metrics: SourceMetrics;
  readonly logger: Logger;
  /** Gathering interval [ms] (default 200). */
  readonly intervalMs?: number;
  /** Samples gathered before a write is started early (default 20,000). */
  readonly maxBatch?: number;
  /** Drain retry delays [ms] (default 500 doubling to 30,000). */
  readonly retryInitialMs?: number;
  readonly retryMaxMs?: number;
  /** Told of every sample batch committed (for the benchmark's delay figures). */
  readonly onCommitted?: (samples: readonly Sample[]) => void;
}

export class Forwarder {
  private pending: Sample[] = [];
  private inFlight: Promise<void> = Promise.resolve();
  private draining = false;
  private busy = false;
  private stopped = false;
  private readonly timer: NodeJS.Timeout;
  private retryTimer: NodeJS.Timeout | undefined;
  private readonly intervalMs: number;
  private readonly maxBatch: number;

  constructor(private readonly o: ForwarderOptions) {
    this.intervalMs = o.intervalMs ?? 200;
    this.maxBatch = o.maxBatch ?? 20_000;
    this.timer = setInterval(() => this.kick(), this.intervalMs);
    this.timer.unref();
    this.updateDepth();
    if (!o.buffer.isEmpty) this.scheduleDrain(0);
  }

  /** Takes one sample (called from data-change handlers). */
  add(sample: Sample): void {
    if (this.stopped) return;
    this.pending.push(sample);
    if (this.pending.length >= this.maxBatch) this.kick();
  }

  private updateDepth(): void {
    this.o.metrics.bufferDepth = this.o.buffer.depth;
    this.o.metrics.bufferBytes = this.o.buffer.bytes;
  }

  /**
   * Starts writing what is pending when no write is in flight (one at a time, in order).
   * While a write is slow, samples gather into one larger batch: the store's cost is
   * largely per tag and per batch, so coalescing is what lets it catch up.
   */
  private kick(): void {
    if (this.busy || this.pending.length === 0) return;
    const batch = this.pending;
    this.pending = [];
    this.busy = true;
    this.inFlight = this.handle(batch).finally(() => {
      this.busy = false;
      if (this.pending.length >= this.maxBatch) this.kick();
    });
  }

  private async toBuffer(batch: Sample[]): Promise<void> {
    const r = await this.o.buffer.append(batch);
    if (r.refused > 0) {
      this.o.metrics.refused(r.refused);
      this.o.metrics.error(`buffer full: ${r.refused} newest samples refused`);
      this.o.logger.error(
        { refused: r.refused, bufferBytes: this.o.buffer.bytes },
        'on-disk buffer full: newest samples refused',
      );
    }
    this.updateDepth();
  }

  private async handle(batch: Sample[]): Promise<void> {
    try {
      if (this.draining || !this.o.buffer.isEmpty) {
        await this.toBuffer(batch);
        return;
      }
      try {
        await this.o.sink.write(batch);
        await this.o.sink.flush();
        this.o.metrics.samples(batch);
        this.o.onCommitted?.(batch);
      } catch (error) {
        this.o.metrics.error(errorMessage(error));
        this.o.metrics.state = 'buffering';
        this.o.logger.warn(
          { err: error, samples: batch.length },
          'store unreachable: buffering samples on disk',
        );
        await this.toBuffer(batch);
        this.scheduleDrain(this.o.retryInitialMs ?? 500);
      }
    } catch (error) {
      // The buffer itself failed (disk full, permissions): nothing else can keep these samples.
      this.o.metrics.refused(batch.length);
      this.o.metrics.error(errorMessage(error));
      this.o.logger.error({ err: error, samples: batch.length }, 'on-disk buffer write failed: samples lost');
    }
  }

  private scheduleDrain(delayMs: number): void {
    if (this.stopped || this.draining || this.retryTimer !== undefined) return;
    this.retryTimer = setTimeout(() => {
      this.retryTimer = undefined;
      void this.drainLoop(delayMs);
    }, delayMs);
  }

  private async drainLoop(lastDelay: number): Promise<void> {
    if (this.draining || this.stopped) return;
    this.draining = true;
    let ok = false;
    try {
      await this.o.buffer.drain(async (batch) => {
        await this.o.sink.write(batch);
        await this.o.sink.flush();
        this.o.metrics.samples(batch);
        this.o.onCommitted?.(batch);
        this.updateDepth();
      });
      ok = true;
    } catch (error) {
      this.o.metrics.error(errorMessage(error));
    } finally {
      this.draining = false;
      this.updateDepth();
    }
    if (ok && this.o.buffer.isEmpty) {
      if (this.o.metrics.state === 'buffering') this.o.metrics.state = 'connected';
      this.o.logger.info('buffer drained');
      return;
    }
    const next = ok
      ? 0
      : Math.min(Math.max(lastDelay * 2, this.o.retryInitialMs ?? 500), this.o.retryMaxMs ?? 30_000);
    this.scheduleDrain(next);
  }

  /** Writes what is pending (to the store, or the buffer) and stops; buffered samples stay on disk. */
  async stop(): Promise<void> {
    this.stopped = true;
    clearInterval(this.timer);
    if (this.retryTimer !== undefined) clearTimeout(this.retryTimer);
    while (this.busy || this.pending.length > 0) {
      this.kick();
      await this.inFlight;
    }
    while (this.draining) await new Promise((r) => setTimeout(r, 20));
    await this.o.buffer.close();
  }

  /** Resolves once nothing is pending, in flight or buffered (for tests and shutdown). */
  async settled(timeoutMs: number): Promise<boolean> {
    const end = Date.now() + timeoutMs;
    for (;;) {
      this.kick();
      await this.inFlight;
      if (this.pending.length === 0 && this.o.buffer.isEmpty && !this.draining) return true;
      if (Date.now() > end) return false;
      await new Promise((r) => setTimeout(r, 50));
    }
  }
}
