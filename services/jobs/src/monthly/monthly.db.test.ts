import { CAUTION, localDays } from '@isentrope/monitor';
import { readDailyDriftMeans } from '@isentrope/store';
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

describe('monthly export in the site time zone', () => {
  // America/Chicago, US rule (Energy Policy Act of 2005): CST (-06:00) until the second Sunday of
  // March (8 March 2026, 02:00 local), then CDT (-05:00). March 2026 there runs from 1 March 06:00 UTC
  // to 1 April 05:00 UTC. Invented rows either side of each local midnight, told apart by efficiency.
  const rows = [
    { t: Date.UTC(2026, 2, 1, 5, 30), efficiency: 0.5 }, // 28 Feb 23:30 CST: February
    { t: Date.UTC(2026, 2, 1, 6, 30), efficiency: 0.6 }, // 1 Mar 00:30 CST: March
    { t: Date.UTC(2026, 3, 1, 4, 30), efficiency: 0.7 }, // 31 Mar 23:30 CDT: March
    { t: Date.UTC(2026, 3, 1, 5, 30), efficiency: 0.8 }, // 1 Apr 00:30 CDT: April
  ];
  let machineId: number;

  beforeAll(async () => {
    const siteId = await seedTestSite(db.pool, 'monthly-chicago');
    await db.pool.query(`UPDATE sites SET time_zone = 'America/Chicago' WHERE id = $1`, [siteId]);
    machineId = (await seedTestMachine(db.pool, siteId, 'chi-1', { kind: 'pump' })).id;
    await seedResults(
      db.pool,
      machineId,
      rows.map((r) => ({ ...r, uEfficiency: 0.002, operatingPoint: 50 })),
    );
  });

  async function exportJson(fromMs: number): Promise<{
    timeZone: string;
    from: string;
    to: string;
    caution: string;
    machines: { slug: string; resultsTotal: number; meanEfficiency: number | null }[];
  }> {
    const ex = await db.pool.query<{ content: Buffer }>(
      `SELECT content FROM exports WHERE format = 'json' AND created_by = 'system' AND period_from = $1`,
      [new Date(fromMs)],
    );
    expect(ex.rows).toHaveLength(1);
    return JSON.parse(ex.rows[0]!.content.toString('utf8'));
  }

  it('cuts the month at local midnight and exports it once it has ended there, plus 2 h', async () => {
    // The UTC-month exports of March (made in the test above, as by earlier versions) stay as they are.
    const utcMarch = async () =>
      (
        await db.pool.query<{ format: string; checksum: string }>(
          `SELECT format, checksum FROM exports WHERE period_from = $1 AND period_to = $2 ORDER BY format`,
          [new Date(Date.UTC(2026, 2, 1)), new Date(Date.UTC(2026, 3, 1))],
        )
      ).rows;
    const kept = await utcMarch();
    expect(kept.map((r) => r.format)).toEqual(['csv', 'html', 'json']);
    const early = await runMonthlyExport(db.pool, { nowMs: Date.UTC(2026, 3, 1, 6, 59) });
    // At 06:59 UTC on 1 April (01:59 CDT) Chicago's March has not settled: of the look-back
    // (March, February, January) only the two before are due.
    const chicago = early.periods.filter((p) => p.timeZone === 'America/Chicago');
    expect(chicago.map((p) => `${p.timeZone} ${p.month}`)).toEqual([
      'America/Chicago 2026-01',
      'America/Chicago 2026-02',
    ]);
    const due = await runMonthlyExport(db.pool, { nowMs: Date.UTC(2026, 3, 1, 7) });
    expect(due.periods.filter((p) => p.month === '2026-03')).toEqual([
      {
        month: '2026-03',
        timeZone: 'America/Chicago',
        from: '2026-03-01T00:00:00-06:00',
        to: '2026-04-01T00:00:00-05:00',
      },
    ]);
    const march = await exportJson(Date.UTC(2026, 2, 1, 6));
    expect(march.timeZone).toBe('America/Chicago');
    expect(march.to).toBe('2026-04-01T00:00:00-05:00');
    expect(march.caution).toBe(CAUTION);
    const chi = march.machines.find((m) => m.slug === 'chi-1')!;
    // 00:30 on the 1st and 23:30 on the 31st, local: (0.6 + 0.7) / 2 (arithmetic).
    expect(chi.resultsTotal).toBe(2);
    expect(chi.meanEfficiency).toBeCloseTo(0.65, 12);
    // The machine of the UTC site is not in the Chicago export, nor the other way round.
    expect(march.machines.map((m) => m.slug)).toEqual(['chi-1']);
    // February (1 Feb 06:00 UTC to 1 Mar 06:00 UTC) holds 23:30 on 28 February, local.
    const feb = (await exportJson(Date.UTC(2026, 1, 1, 6))).machines.find((m) => m.slug === 'chi-1')!;
    expect(feb.resultsTotal).toBe(1);
    expect(feb.meanEfficiency).toBeCloseTo(0.5, 12);
    // April holds 00:30 on 1 April, local.
    await runMonthlyExport(db.pool, { nowMs: Date.UTC(2026, 4, 1, 7), lookBackMonths: 1 });
    const apr = (await exportJson(Date.UTC(2026, 3, 1, 5))).machines.find((m) => m.slug === 'chi-1')!;
    expect(apr.resultsTotal).toBe(1);
    expect(apr.meanEfficiency).toBeCloseTo(0.8, 12);
    expect(await utcMarch()).toEqual(kept);
  });

  it('states the zone and the bounds in the CSV and the HTML, with the caution', async () => {
    const ex = await db.pool.query<{ format: string; content: Buffer }>(
      `SELECT format, content FROM exports WHERE created_by = 'system' AND period_from = $1 ORDER BY format`,
      [new Date(Date.UTC(2026, 2, 1, 6))],
    );
    const [csv, html] = ex.rows.map((r) => r.content.toString('utf8'));
    const lines = csv!.slice(1).trimEnd().split('\r\n');
    expect(lines.slice(1, 4)).toEqual([
      '# time zone: America/Chicago (months and days are local calendar time)',
      '# period from: 2026-03-01T00:00:00-06:00 (included)',
      '# period to: 2026-04-01T00:00:00-05:00 (excluded)',
    ]);
    expect(lines.at(-1)).toBe(`"# ${CAUTION}"`);
    expect(html).toContain('Time zone <strong>America/Chicago</strong>');
    expect(html).toContain(CAUTION);
  });

  it('daily drift means fall on local days, the 23-hour 8 March and the last evening of the month included', async () => {
    // Drift values (invented) set straight on the rows, 8 March rows added at 00:30 and 23:30 local
    // (06:30 UTC that day, 04:30 UTC the next): both belong to the 23-hour 8 March (06:00 to 05:00 UTC).
    await seedResults(
      db.pool,
      machineId,
      [Date.UTC(2026, 2, 8, 6, 30), Date.UTC(2026, 2, 9, 4, 30)].map((t) => ({
        t,
        efficiency: 0.65,
        uEfficiency: 0.002,
        operatingPoint: 50,
      })),
    );
    await db.pool.query(`UPDATE results SET drift = 100 * efficiency - 60 WHERE machine_id = $1`, [
      machineId,
    ]);
    const days = [
      ...localDays('America/Chicago', '2026-03-08', 1),
      ...localDays('America/Chicago', '2026-03-31', 2),
    ];
    const means = await readDailyDriftMeans(db.pool, machineId, days, 1);
    expect(means.n).toEqual([2, 1, 1]);
    // 8 March: mid-point of 06:00 to 05:00 UTC next day; drift 100 x 0.65 - 60 = 5 points.
    expect(means.t[0]).toBe(Date.UTC(2026, 2, 8, 17, 30));
    expect(means.driftPts[0]).toBeCloseTo(5, 9);
    // 31 March holds 23:30 local (0.7: 10 points); 1 April holds 00:30 local (0.8: 20 points).
    expect(means.driftPts.slice(1)).toEqual([expect.closeTo(10, 9), expect.closeTo(20, 9)]);
    expect(means.t[1]).toBe(Date.UTC(2026, 2, 31, 17));
  });
});
