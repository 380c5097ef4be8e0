import { TAG_LOCK_CLASS } from '@isentrope/store';
import pino from 'pino';
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { createTestDatabase, type TestDatabase } from '../../../test/support/database.js';
import { type JobsService, startJobs } from './scheduler.js';

let db: TestDatabase;
const silent = pino({ level: 'silent' });

beforeAll(async () => {
  db = await createTestDatabase();
});
afterAll(async () => {
  await db?.drop();
});

describe('scheduler leases', () => {
  it('two instances against one database evaluate each tick once', async () => {
    let evaluations = 0;
    const slowJob = async (): Promise<void> => {
      evaluations++;
      await new Promise((r) => setTimeout(r, 50));
    };
    const make = (): Promise<JobsService> =>
      startJobs({
        pool: db.pool,
        databaseUrl: db.url,
        logger: silent,
        config: {},
        manual: true,
        jobs: { alerts: slowJob },
      });
    const [a, b] = await Promise.all([make(), make()]);
    const ticks = [0, 60_000, 120_000, 180_000].map((k) => Date.UTC(2026, 0, 1) + k);
    const outcomes: string[] = [];
    for (const t of ticks) {
      // Both fire together (the usual case), then the slower one fires again later (clock skew).
      outcomes.push(...(await Promise.all([a.runTick('alerts', t), b.runTick('alerts', t)])));
      outcomes.push(await b.runTick('alerts', t));
    }
    expect(evaluations).toBe(ticks.length);
    expect(outcomes.filter((o) => o === 'ran').length).toBe(ticks.length);
    const runs = await db.pool.query<{ n: number }>(
      `SELECT count(*)::int AS n FROM job_runs WHERE job = 'alerts' AND status = 'ok'`,
    );
    expect(runs.rows[0]?.n).toBe(ticks.length);
    await Promise.all([a.stop(), b.stop()]);
  });

  it('records a failing job as failed and keeps ticking', async () => {
    const s = await startJobs({
      pool: db.pool,
      databaseUrl: db.url,
      logger: silent,
      config: {},
      manual: true,
      jobs: {
        retention: () => Promise.reject(new Error('disk on fire (invented)')),
      },
    });
    expect(await s.runTick('retention', 1000)).toBe('failed');
    expect(await s.runTick('retention', 61_000)).toBe('failed');
    const runs = await db.pool.query<{ error: string }>(
      `SELECT error FROM job_runs WHERE job = 'retention' ORDER BY id`,
    );
    expect(runs.rows.map((r) => r.error)).toEqual(['disk on fire (invented)', 'disk on fire (invented)']);
    expect(await s.runTick('monthly', 1000)).toBe('no-job');
    await s.stop();
  });

  it('does not hold a sample writer lock: a tick of the compute job (key 1) lets tag 1 be written', async () => {
    const s = await startJobs({
      pool: db.pool,
      databaseUrl: db.url,
      logger: silent,
      config: {},
      manual: true,
      jobs: {
        // Takes the writer's per-tag lock on tag 1 (TAG_LOCK_CLASS) on another connection.
        compute: async () => {
          const c = await db.pool.connect();
          try {
            await c.query('BEGIN');
            const got = await c.query<{ ok: boolean }>('SELECT pg_try_advisory_xact_lock($1, 1) AS ok', [
              TAG_LOCK_CLASS,
            ]);
            await c.query('COMMIT');
            if (got.rows[0]?.ok !== true) throw new Error('tag 1 is locked by the tick');
          } finally {
            c.release();
          }
        },
      },
    });
    expect(await s.runTick('compute', Date.UTC(2026, 0, 2))).toBe('ran');
    await s.stop();
  });
});
