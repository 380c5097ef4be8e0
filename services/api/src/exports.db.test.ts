// Expected figures: hand calculations from the export's definitions over invented seeded rows (common practice, no source).
import { buildMonthlyReport, CAUTION, gatherMonth } from '@isentrope/monitor';
import { monthlyFigures } from '@isentrope/store';
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { createTestDatabase, type TestDatabase } from '../../../test/support/database.js';
import type { ApiApp } from './app.js';
import { buildTestApp, postExport } from './test-support/app.js';
import {
  analyseStored,
  createToken,
  createUser,
  insertResults,
  type SeededPlant,
  seedPlant,
  setBands,
  setBaseline,
} from './test-support/seed.js';

const HOUR = 3_600_000;
const DAY = 86_400_000;

/**
 * Known results (invented): March 2026 (744 h) for the compressor, hourly, load x = 0.8 so that
 * the baseline 0.80 + 0.05 x = 0.84; efficiency falls linearly by 0.1 point per day from 0.83;
 * power 2 MW; 24 invalid results that must not count. February: efficiency 0.835 throughout.
 * Turbine: baseline 0.88 flat, efficiency 0.85, 10 MW, only the first 15 days of March.
 */
describe('monthly degradation export against the stored results', () => {
  let db: TestDatabase;
  let app: ApiApp;
  let plant: SeededPlant;
  let token: string;
  const march = Date.UTC(2026, 2, 1);
  const feb = Date.UTC(2026, 1, 1);
  const effAt = (i: number): number => 0.83 - (0.001 * i) / 24;

  beforeAll(async () => {
    db = await createTestDatabase();
    plant = await seedPlant(db.pool);
    token = await createToken(db.pool, await createUser(db.pool, 'planner', 'engineer', 'planner-password'));
    await setBaseline(db.pool, plant.compressorId, [0.8, 0.05], 0.4, 1);
    await setBands(db.pool, plant.compressorId, 2, 4);
    await setBaseline(db.pool, plant.turbineId, [0.88], 0, 2);
    await insertResults(
      db.pool,
      plant.compressorId,
      Array.from({ length: 28 * 24 }, (_, i) => ({
        t: feb + i * HOUR,
        efficiency: 0.835,
        operatingPoint: 0.8,
        power: 2e6,
      })),
    );
    await insertResults(
      db.pool,
      plant.compressorId,
      Array.from({ length: 744 }, (_, i) => ({
        t: march + i * HOUR,
        efficiency: effAt(i),
        operatingPoint: 0.8,
        power: 2e6,
        valid: i % 31 !== 7, // 24 invalid results in the month
      })),
    );
    await insertResults(
      db.pool,
      plant.turbineId,
      Array.from({ length: 15 * 24 }, (_, i) => ({
        t: march + i * HOUR,
        efficiency: 0.85,
        operatingPoint: 1,
        power: 1e7,
      })),
    );
    await analyseStored(db.pool, Date.UTC(2026, 3, 1), HOUR);
    app = await buildTestApp(db.pool, { energyPrice: { perMWh: 90, currency: 'EUR' } });
  });
  afterAll(async () => {
    await app?.close();
    await db?.drop();
  });

  /** The expected figures, summed here from the same seeded rows (definition in packages/monitor/src/report/monthly.ts). */
  function expectedCompressor() {
    let e = 0;
    let sumEta = 0;
    let n = 0;
    for (let i = 0; i < 744; i++) {
      if (i % 31 === 7) continue;
      const eta = effAt(i);
      e += 2e6 * (1 - eta / 0.84) * 3600; // [J] one hour per result
      sumEta += eta;
      n++;
    }
    return { mwh: e / 3.6e9, meanEta: sumEta / n, n };
  }

  it('gathers and builds figures equal to the stored results', async () => {
    const report = buildMonthlyReport(
      await gatherMonth(monthlyFigures(db.pool), '2026-03', {
        timeZone: 'UTC',
        price: { perMWh: 90, currency: 'EUR' },
        generatedAtMs: 0,
        minPointsPerDay: 20, // hourly rows: 23 or 24 a day
      }),
    );
    const ac = report.machines.find((m) => m.machineId === plant.compressorId)!;
    const exp = expectedCompressor();
    expect(ac.resultsValid).toBe(exp.n);
    expect(ac.resultsTotal).toBe(744);
    expect(ac.intervalMs).toBe(HOUR);
    expect(ac.coverage).toBeCloseTo(720 / 744, 12);
    expect(ac.meanEfficiency).toBeCloseTo(exp.meanEta, 12);
    expect(ac.driftPts).toBeCloseTo(100 * (exp.meanEta - 0.84), 9);
    // February drift: 0.835 - 0.84 = -0.5 points.
    expect(ac.driftChangePts).toBeCloseTo(100 * (exp.meanEta - 0.84) + 0.5, 9);
    expect(ac.energyLostMWh).toBeCloseTo(exp.mwh, 9);
    expect(ac.cost).toBeCloseTo(exp.mwh * 90, 6);
    // Linear loss of 0.1 point/day: Theil-Sen on daily means gives -0.1 x 30.44 points/month
    // (collinear daily means within March; February's flat days pull the median slope towards 0,
    // so only March's days are checked here by the sign and the forecast status).
    expect(ac.ratePtsPerMonth).toBeLessThan(0);
    const st = report.machines.find((m) => m.machineId === plant.turbineId)!;
    // 10 MW x (0.88/0.85 - 1) x 360 h (hand calculation from the definition).
    expect(st.energyLostMWh).toBeCloseTo(10 * (0.88 / 0.85 - 1) * 360, 9);
    expect(st.coverage).toBeCloseTo(360 / 744, 12);
    expect(st.forecast.status).toBe('none'); // no bands on the turbine
    expect(report.totals.energyLostMWh).toBeCloseTo(exp.mwh + 10 * (0.88 / 0.85 - 1) * 360, 9);
  });

  it('makes the CSV through the API, with the same figures, and serves it for download', async () => {
    const made = await postExport(app, token, { month: '2026-03', format: 'csv' });
    expect(made.statusCode).toBe(201);
    const x = made.json<{ id: number; download: string; checksum: string }>();
    const dl = await app.inject({
      method: 'GET',
      url: x.download,
      headers: { authorization: `Bearer ${token}` },
    });
    expect(dl.statusCode).toBe(200);
    expect(dl.headers['content-type']).toMatch(/^text\/csv; charset=utf-8/);
    expect(dl.headers['content-disposition']).toBe(
      'attachment; filename="isentrope-degradation-2026-03.csv"',
    );
    const text = dl.body;
    expect(text.charCodeAt(0)).toBe(0xfeff);
    const lines = text.slice(1).trimEnd().split('\r\n');
    // The site is in UTC: the comment rows say so, with the bounds.
    expect(lines.slice(1, 4)).toEqual([
      '# time zone: UTC (months and days are local calendar time)',
      '# period from: 2026-03-01T00:00:00+00:00 (included)',
      '# period to: 2026-04-01T00:00:00+00:00 (excluded)',
    ]);
    const header = lines.find((l) => !l.startsWith('#'))!.split(',');
    const ac = lines.find((l) => l.includes(',ac1,'))!.split(',');
    const col = (name: string) => ac[header.indexOf(name)];
    const exp = expectedCompressor();
    expect(col('energy_lost_mwh')).toBe(exp.mwh.toFixed(3));
    expect(col('cost')).toBe((exp.mwh * 90).toFixed(2));
    expect(col('currency')).toBe('EUR');
    expect(col('mean_efficiency_pct')).toBe((100 * exp.meanEta).toFixed(3));
    expect(col('coverage_pct')).toBe(((100 * 720) / 744).toFixed(1));
    expect(lines.at(-1)).toBe(`"# ${CAUTION}"`);
  });

  it('makes the printable HTML and the JSON; lists exports newest first', async () => {
    for (const format of ['html', 'json'] as const) {
      const made = await postExport(app, token, { month: '2026-03', format });
      expect(made.statusCode).toBe(201);
      const dl = await app.inject({
        method: 'GET',
        url: made.json<{ download: string }>().download,
        headers: { authorization: `Bearer ${token}` },
      });
      expect(dl.body).toContain(format === 'html' ? '<svg' : '"energyLostMWh"');
      expect(dl.body).toContain(CAUTION);
    }
    const list = await app.inject({
      method: 'GET',
      url: '/api/exports?limit=2',
      headers: { authorization: `Bearer ${token}` },
    });
    const page = list.json<{ items: { format: string }[]; next: string | null }>();
    expect(page.items.map((i) => i.format)).toEqual(['json', 'html']);
    expect(page.next).not.toBeNull();
  });

  it('daily drift for the rate is taken from the stored days', async () => {
    const input = await gatherMonth(monthlyFigures(db.pool), '2026-03', {
      timeZone: 'UTC',
      rateWindowDays: 31,
      minPointsPerDay: 20,
      generatedAtMs: 0,
    });
    const ac = input.machines.find((m) => m.machineId === plant.compressorId)!;
    expect(ac.dailyDrift.t.length).toBe(31);
    // Day 0 of March: mean of effAt(0..23) except i = 7, minus 0.84, in points.
    let s = 0;
    let n = 0;
    for (let i = 0; i < 24; i++)
      if (i % 31 !== 7) {
        s += effAt(i);
        n++;
      }
    expect(ac.dailyDrift.driftPts[0]).toBeCloseTo(100 * (s / n - 0.84), 9);
    expect(ac.dailyDrift.t[0]).toBe(march + DAY / 2);
  });
});

/**
 * A second site in Europe/Berlin (invented): CET (+01:00), CEST (+02:00) from the last Sunday of
 * March, 01:00 UTC (29 March 2026), under the EU rule. Its March 2026 runs from 28 February 23:00 UTC
 * to 31 March 22:00 UTC. Invented rows either side of each local midnight, told apart by efficiency,
 * against a flat baseline of 0.70.
 */
describe('monthly export in the site time zone, through the API', () => {
  let db: TestDatabase;
  let app: ApiApp;
  let token: string;
  let pumpId: number;
  const rows = [
    { t: Date.UTC(2026, 1, 28, 22, 30), efficiency: 0.5 }, // 28 Feb 23:30 CET: February
    { t: Date.UTC(2026, 1, 28, 23, 30), efficiency: 0.6 }, // 1 Mar 00:30 CET: March
    { t: Date.UTC(2026, 2, 31, 21, 30), efficiency: 0.7 }, // 31 Mar 23:30 CEST: March
    { t: Date.UTC(2026, 2, 31, 22, 30), efficiency: 0.8 }, // 1 Apr 00:30 CEST: April
  ];

  beforeAll(async () => {
    db = await createTestDatabase();
    await seedPlant(db.pool); // the UTC site
    const site = await db.pool.query<{ id: number }>(
      `INSERT INTO sites (slug, name, time_zone, ambient_pressure, spec)
       VALUES ('berlin', 'Invented Berlin works', 'Europe/Berlin', '1.013 bara', '{}') RETURNING id`,
    );
    const m = await db.pool.query<{ id: number }>(
      `INSERT INTO machines (site_id, slug, name, kind, fluid, spec)
       VALUES ($1, 'pu1', 'Pump PU1 (invented)', 'pump', '"water"', '{}') RETURNING id`,
      [site.rows[0]!.id],
    );
    pumpId = m.rows[0]!.id;
    await setBaseline(db.pool, pumpId, [0.7], 0, 2);
    await insertResults(
      db.pool,
      pumpId,
      rows.map((r) => ({ ...r, operatingPoint: 1, power: 1e6 })),
    );
    await analyseStored(db.pool, Date.UTC(2026, 3, 2), HOUR);
    token = await createToken(db.pool, await createUser(db.pool, 'planner', 'engineer', 'planner-password'));
    app = await buildTestApp(db.pool);
  });
  afterAll(async () => {
    await app?.close();
    await db?.drop();
  });

  const post = (payload: Record<string, unknown>) =>
    app.inject({
      method: 'POST',
      url: '/api/exports',
      headers: { authorization: `Bearer ${token}` },
      payload,
    });
  const get = (url: string) =>
    app.inject({ method: 'GET', url, headers: { authorization: `Bearer ${token}` } });

  it('refuses a fleet export when the months of the sites differ, and an unknown zone', async () => {
    const mixed = await post({ month: '2026-03', format: 'json' });
    expect(mixed.statusCode).toBe(422);
    expect(mixed.json<{ detail: string }>().detail).toContain('Europe/Berlin, UTC');
    const bad = await post({ month: '2026-03', format: 'json', timeZone: 'Mars/Olympus' });
    expect(bad.statusCode).toBe(400);
    const n = await db.pool.query<{ n: number }>('SELECT count(*)::int AS n FROM exports');
    expect(n.rows[0]!.n).toBe(0);
  });

  it("cuts a machine's month at its site's local midnight and states zone and bounds", async () => {
    const made = await post({ month: '2026-03', format: 'json', machineId: pumpId });
    expect(made.statusCode).toBe(201);
    const x = made.json<{ month: string; periodFrom: string; periodTo: string; download: string }>();
    expect(x.month).toBe('2026-03');
    expect(x.periodFrom).toBe('2026-02-28T23:00:00.000Z');
    expect(x.periodTo).toBe('2026-03-31T22:00:00.000Z');
    const dl = await get(x.download);
    expect(dl.headers['content-disposition']).toBe(
      `attachment; filename="isentrope-degradation-2026-03-machine-${pumpId}.json"`,
    );
    const json = dl.json<{
      timeZone: string;
      from: string;
      to: string;
      caution: string;
      machines: {
        resultsTotal: number;
        meanEfficiency: number;
        days: { date: string; driftPts: number }[];
      }[];
    }>();
    expect(json.timeZone).toBe('Europe/Berlin');
    expect(json.from).toBe('2026-03-01T00:00:00+01:00');
    expect(json.to).toBe('2026-04-01T00:00:00+02:00');
    expect(json.caution).toBe(CAUTION);
    // 00:30 on 1 March and 23:30 on 31 March, local: (0.6 + 0.7) / 2 (arithmetic).
    expect(json.machines[0]!.resultsTotal).toBe(2);
    expect(json.machines[0]!.meanEfficiency).toBeCloseTo(0.65, 12);
    // Each local day holds one result, fewer than the 60 a day needs to count in the rate (the
    // monthly job's default too): no days.
    expect(json.machines[0]!.days).toEqual([]);
  });

  it('local days of the 90-day rate window, which reaches back before the month, with one point a day allowed', async () => {
    const report = buildMonthlyReport(
      await gatherMonth(monthlyFigures(db.pool), '2026-03', {
        timeZone: 'Europe/Berlin',
        machineIds: [pumpId],
        minPointsPerDay: 1,
        generatedAtMs: 0,
      }),
    );
    // 28 February, 1 March and 31 March, at 100 (0.5 - 0.7), 100 (0.6 - 0.7) and 100 (0.7 - 0.7) points (arithmetic).
    const days = report.machines[0]!.days;
    expect(days.map((d) => d.date)).toEqual(['2026-02-28', '2026-03-01', '2026-03-31']);
    expect(days.map((d) => d.driftPts)).toEqual([
      expect.closeTo(-20, 9),
      expect.closeTo(-10, 9),
      expect.closeTo(0, 9),
    ]);
  });

  it('daily drift days are local: mid-points of 1 March (24 h) and 31 March (CEST)', async () => {
    const input = await gatherMonth(monthlyFigures(db.pool), '2026-03', {
      timeZone: 'Europe/Berlin',
      machineIds: [pumpId],
      rateWindowDays: 31,
      minPointsPerDay: 1,
      generatedAtMs: 0,
    });
    // 1 March: 28 Feb 23:00 to 1 Mar 23:00 UTC; 31 March: 30 Mar 22:00 to 31 Mar 22:00 UTC.
    expect(input.machines[0]!.dailyDrift.t).toEqual([Date.UTC(2026, 2, 1, 11), Date.UTC(2026, 2, 31, 10)]);
  });

  it('makes a fleet CSV in the zone asked for, with the zone, the bounds and the caution', async () => {
    const made = await post({ month: '2026-03', format: 'csv', timeZone: 'Europe/Berlin' });
    expect(made.statusCode).toBe(201);
    const dl = await get(made.json<{ download: string }>().download);
    expect(dl.headers['content-disposition']).toBe(
      'attachment; filename="isentrope-degradation-2026-03.csv"',
    );
    const lines = dl.body.slice(1).trimEnd().split('\r\n');
    expect(lines.slice(1, 4)).toEqual([
      '# time zone: Europe/Berlin (months and days are local calendar time)',
      '# period from: 2026-03-01T00:00:00+01:00 (included)',
      '# period to: 2026-04-01T00:00:00+02:00 (excluded)',
    ]);
    expect(lines.filter((l) => /^2026-03,/.test(l)).map((l) => l.split(',')[2])).toEqual([
      'pu1',
      'ac1',
      'st1',
    ]);
    expect(lines.at(-1)).toBe(`"# ${CAUTION}"`);
  });
});
