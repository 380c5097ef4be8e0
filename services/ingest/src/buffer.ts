/**
 * A bounded on-disk buffer of samples for store-and-forward: append-only segment files
 * (one JSON line per batch), fsync'd when a segment is rolled and on close, drained
 * oldest first. When full, the newest samples are refused (counted), the oldest are kept:
 * nothing already buffered is overwritten.
 *
 * Durability: a process crash loses nothing appended (the bytes are in the OS); a power
 * loss can lose the unsynced tail of the current segment. A torn last line is skipped
 * and counted on read.
 */

import type { FileHandle } from 'node:fs/promises';
import { mkdir, open, readdir, readFile, stat, unlink } from 'node:fs/promises';
import { join } from 'node:path';
import type { Sample } from './types.js';

export interface DiskBufferOptions {
  readonly dir: string;
  /** A segment is closed and fsync'd past this size [bytes] (default 4 MiB). */
  readonly segmentBytes?: number;
  /** Total size limit [bytes] (default 1 GiB); beyond it appends are refused. */
  readonly maxBytes?: number;
}

type Packed = [tagId: number, timeMs: number, value: number, quality: number];

const NAME = /^seg-(\d{12})\.ndjson$/;

function segName(seq: number): string {
  return `seg-${String(seq).padStart(12, '0')}.ndjson`;
}

export class DiskBuffer {
  private readonly segmentBytes: number;
  private readonly maxBytes: number;
  /** Closed segments, oldest first: [seq, bytes, samples]. */
  private readonly closed: { seq: number; bytes: number; samples: number }[] = [];
  private current: { seq: number; handle: FileHandle; bytes: number; samples: number } | undefined;
  private nextSeq = 1;
  private lock: Promise<unknown> = Promise.resolve();
  /** Lines that could not be read back (torn by a crash). */
  tornLines = 0;

  private constructor(
    readonly dir: string,
    options: DiskBufferOptions,
  ) {
    this.segmentBytes = options.segmentBytes ?? 4 * 1024 * 1024;
    this.maxBytes = options.maxBytes ?? 1024 * 1024 * 1024;
  }

  /** Opens the buffer folder; segments left by an earlier run are kept and drained first. */
  static async open(options: DiskBufferOptions): Promise<DiskBuffer> {
    const b = new DiskBuffer(options.dir, options);
    await mkdir(options.dir, { recursive: true });
    const names = (await readdir(options.dir)).filter((n) => NAME.test(n)).sort();
    for (const n of names) {
      const seq = Number(NAME.exec(n)![1]);
      const path = join(options.dir, n);
      const bytes = (await stat(path)).size;
      if (bytes === 0) {
        await unlink(path);
        continue;
      }
      const samples = b.parse(await readFile(path, 'utf8'), false).reduce((a, x) => a + x.length, 0);
      b.closed.push({ seq, bytes, samples });
      b.nextSeq = Math.max(b.nextSeq, seq + 1);
    }
    return b;
  }

  get bytes(): number {
    return this.closed.reduce((a, s) => a + s.bytes, 0) + (this.current?.bytes ?? 0);
  }

  /** Samples held. */
  get depth(): number {
    return this.closed.reduce((a, s) => a + s.samples, 0) + (this.current?.samples ?? 0);
  }

  get isEmpty(): boolean {
    return this.depth === 0;
  }

  private serial<T>(fn: () => Promise<T>): Promise<T> {
    const run = this.lock.then(fn, fn);
    this.lock = run.catch(() => {});
    return run;
  }

  /** Appends a batch; returns how many samples were refused (all of them when full). */
  append(samples: readonly Sample[]): Promise<{ accepted: number; refused: number }> {
    return this.serial(async () => {
      if (samples.length === 0) return { accepted: 0, refused: 0 };
      const line = `${JSON.stringify(samples.map((s): Packed => [s.tagId, s.time.getTime(), s.value, s.quality]))}\n`;
      const size = Buffer.byteLength(line);
      if (this.bytes + size > this.maxBytes) return { accepted: 0, refused: samples.length };
      if (this.current === undefined) {
        const seq = this.nextSeq++;
        this.current = { seq, handle: await open(join(this.dir, segName(seq)), 'a'), bytes: 0, samples: 0 };
      }
      await this.current.handle.write(line);
      this.current.bytes += size;
      this.current.samples += samples.length;
      if (this.current.bytes >= this.segmentBytes) await this.rollLocked();
      return { accepted: samples.length, refused: 0 };
    });
  }

  private async rollLocked(): Promise<void> {
    const c = this.current;
    if (c === undefined) return;
    this.current = undefined;
    await c.handle.sync();
    await c.handle.close();
    this.closed.push({ seq: c.seq, bytes: c.bytes, samples: c.samples });
  }

  private parse(text: string, count: boolean): Sample[][] {
    const out: Sample[][] = [];
    for (const line of text.split('\n')) {
      if (line === '') continue;
      try {
        const packed = JSON.parse(line) as Packed[];
        out.push(packed.map(([tagId, t, value, quality]) => ({ tagId, time: new Date(t), value, quality })));
      } catch {
        if (count) this.tornLines++;
      }
    }
    return out;
  }

  /**
   * Writes everything buffered through `write`, oldest segment first, batch by batch in
   * the order appended; a segment is deleted only once all its batches are written. A
   * failing write stops the drain and rejects, leaving that segment (writing it again
   * later adds nothing: the store keeps each (tag, time) once). Returns samples written.
   */
  async drain(write: (samples: Sample[]) => Promise<void>): Promise<number> {
    let written = 0;
    for (;;) {
      const seg = await this.serial(async () => {
        if (this.closed.length === 0) await this.rollLocked();
        return this.closed[0];
      });
      if (seg === undefined) return written;
      const path = join(this.dir, segName(seg.seq));
      for (const batch of this.parse(await readFile(path, 'utf8'), true)) {
        await write(batch);
        written += batch.length;
      }
      await this.serial(async () => {
        await unlink(path);
        this.closed.shift();
      });
    }
  }

  /** Syncs and closes the current segment (its samples stay for the next run). */
  async close(): Promise<void> {
    await this.serial(() => this.rollLocked());
  }
}
