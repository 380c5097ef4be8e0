/**
 * Compute worker threads (piscina): the model work of a backfill spread over the cores while the
 * main thread reads samples and writes results. Each task is one machine and one chunk of time;
 * the samples are moved to the worker (not copied) and the encoded rows come back.
 */
import { availableParallelism } from 'node:os';
import { Piscina } from 'piscina';
import type { MachineRow } from './config.js';
import type { RawSeries, ResolvedComputeOptions } from './pipeline.js';
import type { ComputeTask, ComputeTaskResult } from './worker-task.js';

/** Default thread count: one per core, at most 4 (the database needs cores too). */
export function defaultComputeThreads(): number {
  return Math.max(1, Math.min(4, availableParallelism()));
}

export class ComputeWorkers {
  private readonly pool: Piscina<ComputeTask, ComputeTaskResult>;

  constructor(readonly threads: number = defaultComputeThreads()) {
    this.pool = new Piscina({
      filename: new URL('./worker-entry.mjs', import.meta.url).href,
      minThreads: threads,
      maxThreads: threads,
    });
  }

  /** One machine's COPY body for [fromMs, toMs); the samples' arrays are moved to the worker. */
  async compute(
    machine: MachineRow,
    samples: ReadonlyMap<number, RawSeries>,
    fromMs: number,
    toMs: number,
    options: ResolvedComputeOptions,
  ): Promise<{ body: Buffer; rows: number }> {
    const transferList: ArrayBuffer[] = [];
    const seen = new Set<ArrayBufferLike>();
    for (const s of samples.values())
      for (const column of [s.t, s.value, s.quality])
        if (ArrayBuffer.isView(column) && column.buffer instanceof ArrayBuffer && !seen.has(column.buffer)) {
          seen.add(column.buffer);
          transferList.push(column.buffer);
        }
    const task: ComputeTask = { machine, samples, fromMs, toMs, options };
    const result = await this.pool.run(task, { transferList });
    return {
      body: Buffer.from(result.body.buffer, result.body.byteOffset, result.body.byteLength),
      rows: result.rows,
    };
  }

  async close(): Promise<void> {
    await this.pool.destroy();
  }
}
