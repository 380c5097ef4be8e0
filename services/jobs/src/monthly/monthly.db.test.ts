import { CAUTION } from '@isentrope/monitor';
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { createTestDatabase, type TestDatabase } from '../../../../test/support/database.js';
import { seedBaseline, seedResults, seedTestMachine, seedTestSite } from '../alerts/seed.js';
import { runAnalysisOnce } from '../analysis/job.js';
import { runMonthlyExport } from './job.js';

let db: TestDatabase;
beforeAll(async () => {
  db = await createTestDatabase();
});
afterAll(async () => {
  await db?.drop();
});

describe('monthly export', () => {
  it('exports each complete month once, in three formats, with the caution', async () => {
    const siteId = await seedTestSite(db.pool, 'monthly-works');
    const m = await seedTestMachine(db.pool, siteId, 'mon-1', { kind: 'pump' });
    const from = Date.UTC(2026, 4, 1);
    const to = Date.UTC(2026, 5, 1);
    await seedBaseline(db.pool, m.id, [0.7], from - 10 * 86_400_000, from - 86_400_000);
    const rows = [];
    // Invented: a constant loss of 1 point (efficiency 0.69 against a baseline of 0.70), every 10 min.
    for (let t = from; t < to; t += 600_000)
      rows.push({ t, efficiency: 0.69, uEfficiency: 0.002, operatingPoint: 50 });
    await seedResults(db.pool, m.id, rows);
    await runAnalysisOnce(db.pool, { nowMs: to, stepMs: 600_000, maxBatches: Number.POSITIVE_INFINITY });
    const tick = Date.UTC(2026, 5, 1, 2); // 02:00 UTC on the 1st
    const first = await runMonthlyExport(db.pool, { nowMs: tick, minPointsPerDay: 100 });
    expect(first.months).toContain('2026-05');
    const again = await runMonthlyExport(db.pool, { nowMs: tick + 60_000, minPointsPerDay: 100 });
    expect(again.exports).toBe(0);
    const ex = await db.pool.query<{ format: string; content: Buffer; checksum: string }>(
      `SELECT format, content, checksum FROM exports WHERE period_from = $1 ORDER BY format`,
      [new Date(from)],
    );
    expect(ex.rows.map((r) => r.format)).toEqual(['csv', 'html', 'json']);
    const json = JSON.parse(ex.rows[2]!.content.toString('utf8')) as {
      caution: string;
      machines: { slug: string; driftPts: number | null }[];
    };
    expect(json.caution).toBe(CAUTION);
    const mach = json.machines.find((x) => x.slug === 'mon-1');
    // 100 (0.69 - 0.70) = -1 point (arithmetic).
    expect(mach?.driftPts).toBeCloseTo(-1, 9);
  });
});
