/**
 * Native RANGE partitions of the time-series tables, created ahead of the data.
 * No default partition exists (see migrations/0002_timeseries.sql): writers call
 * ensurePartitions for the span of every batch, services call ensureCurrentPartitions on
 * start and daily, so a row never finds its month missing.
 */
import type pg from 'pg';
import { StoreError } from './errors.js';
import { inTransaction } from './transaction.js';

export type PartitionedTable = 'samples' | 'samples_1m' | 'samples_1h' | 'results';
export type PartitionGrain = 'month' | 'year';

/** Monthly partitions, except the hourly rollup (8,760 rows per tag-year) which is yearly. */
export const PARTITION_GRAIN: Readonly<Record<PartitionedTable, PartitionGrain>> = {
  samples: 'month',
  samples_1m: 'month',
  samples_1h: 'year',
  results: 'month',
};

/** A bad timestamp (year 1970 or 9999) must not create thousands of partitions. */
const MAX_NEW_PARTITIONS = 400;

/** Start [ms, UTC] of the partition period holding time t [ms]. */
export function periodStart(t: number, grain: PartitionGrain): number {
  const d = new Date(t);
  return grain === 'month'
    ? Date.UTC(d.getUTCFullYear(), d.getUTCMonth(), 1)
    : Date.UTC(d.getUTCFullYear(), 0, 1);
}

export function nextPeriod(start: number, grain: PartitionGrain): number {
  const d = new Date(start);
  return grain === 'month'
    ? Date.UTC(d.getUTCFullYear(), d.getUTCMonth() + 1, 1)
    : Date.UTC(d.getUTCFullYear() + 1, 0, 1);
}

/** e.g. samples_p2026_03, samples_1h_p2026. */
export function partitionName(table: PartitionedTable, start: number): string {
  const d = new Date(start);
  const year = String(d.getUTCFullYear()).padStart(4, '0');
  return PARTITION_GRAIN[table] === 'month'
    ? `${table}_p${year}_${String(d.getUTCMonth() + 1).padStart(2, '0')}`
    : `${table}_p${year}`;
}

// Partitions known to exist, per pool; cleared by retention and on a "no partition" error.
const known = new WeakMap<object, Set<string>>();

function knownFor(pool: object): Set<string> {
  let set = known.get(pool);
  if (set === undefined) {
    set = new Set();
    known.set(pool, set);
  }
  return set;
}

/** Forget cached partition names (after retention dropped some, or another process did). */
export function forgetPartitions(pool: object, names?: readonly string[]): void {
  if (names === undefined) known.delete(pool);
  else for (const n of names) known.get(pool)?.delete(n);
}

/**
 * Makes sure every partition of `table` covering [from, to] exists; returns the names it
 * created. Creation runs under a transaction-level advisory lock so that several writers
 * starting the same month do not collide on the catalog.
 */
export async function ensurePartitions(
  pool: pg.Pool,
  table: PartitionedTable,
  from: Date | number,
  to: Date | number,
): Promise<string[]> {
  const grain = PARTITION_GRAIN[table];
  const t0 = typeof from === 'number' ? from : from.getTime();
  const t1 = typeof to === 'number' ? to : to.getTime();
  if (!Number.isFinite(t0) || !Number.isFinite(t1) || t1 < t0) {
    throw new StoreError('STORE_TIME_RANGE', `bad partition range for ${table}: ${t0} to ${t1} [ms]`, {
      table,
      from: t0,
      to: t1,
    });
  }
  const cache = knownFor(pool);
  const wanted: { name: string; start: number; end: number }[] = [];
  for (let start = periodStart(t0, grain); start <= t1; start = nextPeriod(start, grain)) {
    const name = partitionName(table, start);
    if (!cache.has(name)) wanted.push({ name, start, end: nextPeriod(start, grain) });
    if (wanted.length > MAX_NEW_PARTITIONS) {
      throw new StoreError(
        'STORE_TIME_RANGE',
        `${table}: the range ${new Date(t0).toISOString()} to ${new Date(t1).toISOString()} needs more than ` +
          `${MAX_NEW_PARTITIONS} new partitions; a timestamp is probably wrong`,
        { table, from: t0, to: t1 },
      );
    }
  }
  if (wanted.length === 0) return [];
  const existing = await pool.query<{ relname: string }>(
    `SELECT relname FROM pg_class WHERE relname = ANY($1::text[]) AND relnamespace = current_schema()::regnamespace`,
    [wanted.map((w) => w.name)],
  );
  const present = new Set(existing.rows.map((r) => r.relname));
  const missing = wanted.filter((w) => !present.has(w.name));
  for (const w of wanted) if (present.has(w.name)) cache.add(w.name);
  if (missing.length === 0) return [];
  await inTransaction(pool, async (client) => {
    // One lock for all partition DDL: creations are rare and quick.
    await client.query('SELECT pg_advisory_xact_lock(hashtext($1))', ['isentrope.partitions']);
    for (const w of missing) {
      await client.query(
        `CREATE TABLE IF NOT EXISTS ${w.name} PARTITION OF ${table} FOR VALUES FROM ('${new Date(w.start).toISOString()}') TO ('${new Date(w.end).toISOString()}')`,
      );
    }
  });
  for (const w of missing) cache.add(w.name);
  return missing.map((w) => w.name);
}

/** Partitions from this period to `ahead` periods on, for every time-series table; call on start and daily. */
export async function ensureCurrentPartitions(
  pool: pg.Pool,
  now: Date = new Date(),
  monthsAhead = 2,
): Promise<string[]> {
  const t = now.getTime();
  const ahead = Date.UTC(new Date(t).getUTCFullYear(), new Date(t).getUTCMonth() + monthsAhead, 1);
  const created: string[] = [];
  for (const table of Object.keys(PARTITION_GRAIN) as PartitionedTable[]) {
    created.push(...(await ensurePartitions(pool, table, t, ahead)));
  }
  return created;
}

export interface PartitionInfo {
  readonly name: string;
  readonly from: Date;
  readonly to: Date;
}

/** The partitions of a table with their bounds, oldest first. */
export async function listPartitions(pool: pg.Pool, table: PartitionedTable): Promise<PartitionInfo[]> {
  // Bounds are read back from the catalog and cast in SQL (the text carries its offset).
  const res = await pool.query<{ name: string; from: Date; to: Date }>(
    `SELECT c.relname AS name,
            (regexp_match(pg_get_expr(c.relpartbound, c.oid), 'FROM \\(''([^'']+)''\\)'))[1]::timestamptz AS "from",
            (regexp_match(pg_get_expr(c.relpartbound, c.oid), 'TO \\(''([^'']+)''\\)'))[1]::timestamptz AS "to"
       FROM pg_inherits i JOIN pg_class c ON c.oid = i.inhrelid
      WHERE i.inhparent = $1::regclass
      ORDER BY 2`,
    [table],
  );
  return res.rows;
}
