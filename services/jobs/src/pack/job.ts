/**
 * The pack job: closed ranges of raw samples older than `olderThanMs` (default 2 days) become
 * compressed blocks (packSamples, packages/store/src/blocks/pack.ts), each unit of work one
 * transaction under the writers' per-tag locks. Hourly: a run with nothing to pack costs a
 * partition listing and one index probe per partition.
 */
import { DEFAULT_PACK_AGE_MS, type PackReport, packSamples } from '@isentrope/store';
import type pg from 'pg';
import type { Logger } from 'pino';

export interface PackJobOptions {
  /** Samples older than this [ms] are packed, in whole UTC days (default 2 days). */
  readonly olderThanMs?: number;
}

/** One pack run at tick time nowMs, progress logged per unit; returns the figures for job_runs. */
export async function runPackOnce(
  pool: pg.Pool,
  options: PackJobOptions & { nowMs: number; logger?: Logger },
): Promise<Omit<PackReport, 'phases'>> {
  const log = options.logger;
  const report = await packSamples(pool, {
    nowMs: options.nowMs,
    olderThanMs: options.olderThanMs ?? DEFAULT_PACK_AGE_MS,
    onProgress: (p) => log?.info(p, 'samples packed'),
  });
  const { phases: _phases, ...figures } = report;
  return figures;
}
