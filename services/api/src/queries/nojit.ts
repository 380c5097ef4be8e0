import type pg from 'pg';

/**
 * Run read queries with PostgreSQL's JIT compilation off. The planner's cost of a lateral join
 * over a year of monthly partitions passes jit_above_cost, and compiling then took 13.7 s of a
 * 14 s fleet query on PostgreSQL 15 (measured by services/api/bench/api.bench.ts with EXPLAIN
 * ANALYZE) for an execution of 0.3 s. SET LOCAL keeps the setting to this transaction, so the
 * shared pool is left as it was.
 */
export async function withoutJit<T>(pool: pg.Pool, read: (client: pg.PoolClient) => Promise<T>): Promise<T> {
  const client = await pool.connect();
  try {
    await client.query('BEGIN READ ONLY');
    await client.query('SET LOCAL jit = off');
    const out = await read(client);
    await client.query('COMMIT');
    return out;
  } catch (error) {
    await client.query('ROLLBACK').catch(() => {});
    throw error;
  } finally {
    client.release();
  }
}
