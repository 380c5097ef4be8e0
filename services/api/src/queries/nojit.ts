import { inTransaction } from '@isentrope/store';
import type pg from 'pg';

/**
 * Run read queries with PostgreSQL's JIT compilation off. The planner's cost of a lateral join
 * over a year of monthly partitions passes jit_above_cost, and compiling then took 13.7 s of a
 * 14 s fleet query on PostgreSQL 15 (measured by services/api/bench/api.bench.ts with EXPLAIN
 * ANALYZE) for an execution of 0.3 s. SET LOCAL keeps the setting to this transaction, so the
 * shared pool is left as it was.
 */
export async function withoutJit<T>(pool: pg.Pool, read: (client: pg.PoolClient) => Promise<T>): Promise<T> {
  return inTransaction(pool, async (client) => {
    await client.query('SET TRANSACTION READ ONLY');
    await client.query('SET LOCAL jit = off');
    return read(client);
  });
}
