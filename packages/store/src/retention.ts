/**
 * Retention by dropping whole partitions: cheap, no vacuum debt. A partition goes when
 * its upper bound is older than now minus the table's retention. Rollups are meant to be
 * kept longer than raw samples (trends of old years stay available): a policy asking
 * otherwise is refused.
 */
import type pg from 'pg';
import { StoreError } from './errors.js';
import { forgetPartitions, listPartitions, type PartitionedTable } from './partitions.js';
import { TAG_LOCK_CLASS } from './rollups.js';
import { inTransaction } from './transaction.js';

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

/**
 * Retention per tag or per site, for raw data: days to keep per tag id and per site id (a
 * tag's own entry wins over its site's). Blocks that end before the cutoff are dropped whole
 * (a block straddling it stays until it is wholly older), hot rows before it are deleted;
 * rollups stay (see above). Runs under the writers' per-tag locks, one transaction per call.
 */
export interface RawRetention {
  readonly tags?: ReadonlyMap<number, number>;
  readonly sites?: ReadonlyMap<number, number>;
}

export interface RawRetentionReport {
  readonly tags: number;
  readonly blocksDropped: number;
  readonly rowsDeleted: number;
}

function checkDays(days: number, what: string): void {
  if (!(Number.isFinite(days) && days > 0)) {
    throw new StoreError(
      'STORE_BAD_RETENTION',
      `${what}: retention must be a positive number of days, got ${days}`,
      {
        what,
        days,
      },
    );
  }
}

export async function applyRawRetention(
  pool: pg.Pool,
  policy: RawRetention,
  now: Date = new Date(),
): Promise<RawRetentionReport> {
  for (const [tag, days] of policy.tags ?? []) checkDays(days, `tag ${tag}`);
  for (const [site, days] of policy.sites ?? []) checkDays(days, `site ${site}`);
  const days = new Map<number, number>();
  if (policy.sites !== undefined && policy.sites.size > 0) {
    const res = await pool.query<{ id: number; site_id: number }>(
      'SELECT id, site_id FROM tags WHERE site_id = ANY($1::int[])',
      [[...policy.sites.keys()]],
    );
    for (const r of res.rows) days.set(r.id, policy.sites.get(r.site_id)!);
  }
  for (const [tag, d] of policy.tags ?? []) days.set(tag, d);
  const tags = [...days.keys()].sort((a, b) => a - b);
  if (tags.length === 0) return { tags: 0, blocksDropped: 0, rowsDeleted: 0 };
  const cutoffs = tags.map((t) => new Date(now.getTime() - days.get(t)! * DAY_MS).toISOString());
  return inTransaction(pool, async (client) => {
    await client.query('SELECT pg_advisory_xact_lock($1, t) FROM unnest($2::int[]) AS t ORDER BY t', [
      TAG_LOCK_CLASS,
      tags,
    ]);
    const blocks = await client.query(
      `DELETE FROM sample_blocks b USING unnest($1::int[], $2::timestamptz[]) AS r(tag_id, cutoff)
        WHERE b.tag_id = r.tag_id AND b.last_time < r.cutoff`,
      [tags, cutoffs],
    );
    const rows = await client.query(
      `DELETE FROM samples s USING unnest($1::int[], $2::timestamptz[]) AS r(tag_id, cutoff)
        WHERE s.tag_id = r.tag_id AND s.time < r.cutoff`,
      [tags, cutoffs],
    );
    return { tags: tags.length, blocksDropped: blocks.rowCount ?? 0, rowsDeleted: rows.rowCount ?? 0 };
  });
}
