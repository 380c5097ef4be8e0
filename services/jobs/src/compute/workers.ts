/**
 * Compute worker threads (piscina): the model work of a backfill spread over the cores while the
 * main thread reads samples and writes results. Each task is one machine and one chunk of time;
 * the samples are moved to the worker (not copied) and the encoded rows come back.
 */
import { availableParallelism } from 'node:os';
import type { FindingFlag, MachineRow, RawSeries, ResolvedComputeOptions } from '@isentrope/compute';
import { Piscina } from 'piscina';
import { JobsError } from '../errors.js';
import type { ComputeTask, ComputeTaskResult } from './worker-task.js';

/** Default thread count: one per core, at most 4 (the database needs cores too). */
export function defaultComputeThreads(): number {
  return Math.max(1, Math.min(4, availableParallelism()));
}

export class ComputeWorkers {
  /** Started on the first task, so an unused set costs nothing. */
  private pool: Piscina<ComputeTask, ComputeTaskResult> | undefined;

  constructor(readonly threads: number = defaultComputeThreads()) {
    if (!(Number.isInteger(threads) && threads >= 1))
      throw new JobsError('JOBS_BAD_CONFIG', `compute threads ${threads} must be an integer >= 1`, {
        threads,
      });
  }

  private started(): Piscina<ComputeTask, ComputeTaskResult> {
    this.pool ??= new Piscina({
      filename: new URL('./worker-entry.mjs', import.meta.url).href,
      minThreads: this.threads,
      maxThreads: this.threads,
    });
    return this.pool;
  }

  /** One machine's COPY body for [fromMs, toMs), with its findings' flags; the samples' arrays are moved to the worker. */
  async compute(
    machine: MachineRow,
    samples: ReadonlyMap<number, RawSeries>,
    fromMs: number,
    toMs: number,
    options: ResolvedComputeOptions,
    findings: readonly FindingFlag[] = [],
  ): Promise<{ body: Buffer; rows: number }> {
    const transferList: ArrayBuffer[] = [];
    const seen = new Set<ArrayBufferLike>();
    // Only an array that owns its whole buffer is moved; a view into a shared buffer (a Node
    // Buffer pool slice, say) is copied, so nothing else is detached.
    for (const s of samples.values())
      for (const column of [s.t, s.value, s.quality])
        if (
          ArrayBuffer.isView(column) &&
          column.buffer instanceof ArrayBuffer &&
          column.byteOffset === 0 &&
          column.byteLength === column.buffer.byteLength &&
          !seen.has(column.buffer)
        ) {
          seen.add(column.buffer);
          transferList.push(column.buffer);
        }
    const task: ComputeTask = { machine, samples, fromMs, toMs, options, findings };
    const result = await this.started().run(task, { transferList });
    return {
      body: Buffer.from(result.body.buffer, result.body.byteOffset, result.body.byteLength),
      rows: result.rows,
    };
  }

  async close(): Promise<void> {
    const pool = this.pool;
    this.pool = undefined;
    await pool?.destroy();
  }
}
