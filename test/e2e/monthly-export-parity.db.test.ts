/**
 * An export made on demand (POST /api/exports) and one made by the schedule (the monthly job) for
 * the same month and the same clock are the same bytes, in every format: both gather the stored
 * figures through packages/monitor gatherMonth and render with the same functions. Invented data:
 * a pump losing efficiency steadily over March 2026 against a flat baseline, every 10 minutes.
 */

import { runAnalysisOnce, runMonthlyExport } from '@isentrope/jobs';
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { buildTestApp, postExport } from '../../services/api/src/test-support/app.js';
import { createToken, createUser } from '../../services/api/src/test-support/seed.js';
import {
  seedBaseline,
  seedResults,
  seedTestMachine,
  seedTestSite,
} from '../../services/jobs/src/alerts/seed.js';
import { createTestDatabase, type TestDatabase } from '../support/database.js';

const DAY = 86_400_000;
const MARCH = Date.UTC(2026, 2, 1);
const APRIL = Date.UTC(2026, 3, 1);
// The clock both ways of making the export read: 02:00 UTC on 1 April, after the settle time.
const NOW = Date.UTC(2026, 3, 1, 2);
const PRICE = { perMWh: 80, currency: 'EUR' };

describe('monthly export: on demand and by the schedule', () => {
  let db: TestDatabase;
  let token: string;
  let app: Awaited<ReturnType<typeof buildTestApp>>;

  beforeAll(async () => {
    db = await createTestDatabase();
    const siteId = await seedTestSite(db.pool, 'parity-works');
    const m = await seedTestMachine(db.pool, siteId, 'pu-parity', { kind: 'pump' });
    await seedBaseline(db.pool, m.id, [0.7], MARCH - 20 * DAY, MARCH - 10 * DAY);
    const rows = [];
    // Invented: efficiency falls by 0.02 points a day from 0.70, every 10 minutes (144 a day).
    for (let t = MARCH - 5 * DAY; t < APRIL; t += 600_000)
      rows.push({
        t,
        efficiency: 0.7 - (0.0002 * (t - MARCH)) / DAY,
        uEfficiency: 0.002,
        operatingPoint: 50,
      });
    await seedResults(db.pool, m.id, rows);
    await runAnalysisOnce(db.pool, { nowMs: APRIL, stepMs: 600_000, maxBatches: Number.POSITIVE_INFINITY });
    token = await createToken(db.pool, await createUser(db.pool, 'planner', 'engineer', 'planner-password'));
    app = await buildTestApp(db.pool, { energyPrice: PRICE, now: () => NOW });
  });
  afterAll(async () => {
    await app?.close();
    await db?.drop();
  });

  it('gives byte-identical CSV, JSON and HTML', async () => {
    const scheduled = await runMonthlyExport(db.pool, { nowMs: NOW, price: PRICE, lookBackMonths: 1 });
    expect(scheduled.months).toEqual(['2026-03']);
    for (const format of ['csv', 'json', 'html'] as const) {
      const made = await postExport(app, token, { month: '2026-03', format });
      expect(made.statusCode).toBe(201);
      const id = made.json<{ id: number }>().id;
      const both = await db.pool.query<{ created_by: string; content: Buffer; checksum: string }>(
        `SELECT created_by, content, checksum FROM exports
          WHERE format = $1 AND period_from = $2 AND (created_by = 'system' OR id = $3) ORDER BY created_by`,
        [format, new Date(MARCH), id],
      );
      expect(both.rows.map((r) => r.created_by)).toEqual(['planner', 'system']);
      const [onDemand, bySchedule] = both.rows;
      expect(onDemand!.content.length).toBeGreaterThan(0);
      expect(onDemand!.content.equals(bySchedule!.content)).toBe(true);
      expect(onDemand!.checksum).toBe(bySchedule!.checksum);
    }
  });

  it('the shared figures show the planted loss (the gatherer read the stored drift)', async () => {
    const json = await db.pool.query<{ content: Buffer }>(
      `SELECT content FROM exports WHERE format = 'json' AND created_by = 'system' AND period_from = $1`,
      [new Date(MARCH)],
    );
    const report = JSON.parse(json.rows[0]!.content.toString('utf8')) as {
      machines: { slug: string; driftPts: number | null; ratePtsPerMonth: number | null }[];
    };
    const m = report.machines.find((x) => x.slug === 'pu-parity');
    // Mean drift over March: -0.02 points/day x 15.5 days on average (arithmetic, within the 10-min grid).
    expect(m?.driftPts).toBeCloseTo(-0.02 * 15.5, 1);
    // Rate: -0.02 points/day x 30.44 days (Theil-Sen on collinear daily means, Sen 1968).
    expect(m?.ratePtsPerMonth).toBeCloseTo(-0.02 * 30.44, 2);
  });
});
