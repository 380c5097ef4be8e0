/**
 * Retention by dropping whole partitions: cheap, no vacuum debt. A partition goes when
 * its upper bound is older than now minus the table's retention. Rollups are meant to be
 * kept longer than raw samples (trends of old years stay available): a policy asking
 * otherwise is refused.
 */
import type pg from 'pg';
import { StoreError } from './errors.js';
import { forgetPartitions, listPartitions, type PartitionedTable } from './partitions.js';

/** Days to keep per table; a table left out is kept forever. */
export interface RetentionPolicy {
  readonly samples?: number;
  readonly samples_1m?: number;
  readonly samples_1h?: number;
  readonly results?: number;
}

const DAY_MS = 86_400_000;

export async function applyRetention(
  pool: pg.Pool,
  policy: RetentionPolicy,
  now: Date = new Date(),
): Promise<string[]> {
  const order: [keyof RetentionPolicy, keyof RetentionPolicy][] = [
    ['samples', 'samples_1m'],
    ['samples_1m', 'samples_1h'],
  ];
  for (const [finer, coarser] of order) {
    const a = policy[finer];
    const b = policy[coarser];
    if (a !== undefined && b !== undefined && b < a) {
      throw new StoreError(
        'STORE_BAD_RETENTION',
        `${coarser} must be kept at least as long as ${finer}: ${b} < ${a} days`,
        {
          ...policy,
        },
      );
    }
  }
  for (const [table, days] of Object.entries(policy)) {
    if (!['samples', 'samples_1m', 'samples_1h', 'results'].includes(table)) {
      throw new StoreError('STORE_BAD_RETENTION', `no retention for table "${table}"`, { ...policy });
    }
    if (days !== undefined && !(Number.isFinite(days) && days > 0)) {
      throw new StoreError(
        'STORE_BAD_RETENTION',
        `${table}: retention must be a positive number of days, got ${days}`,
        {
          ...policy,
        },
      );
    }
  }
  const dropped: string[] = [];
  for (const table of Object.keys(policy) as PartitionedTable[]) {
    const days = policy[table];
    if (days === undefined) continue;
    const cutoff = now.getTime() - days * DAY_MS;
    for (const p of await listPartitions(pool, table)) {
      if (p.to.getTime() <= cutoff) {
        await pool.query(`DROP TABLE IF EXISTS ${p.name}`);
        dropped.push(p.name);
      }
    }
  }
  forgetPartitions(pool, dropped);
  return dropped;
}
