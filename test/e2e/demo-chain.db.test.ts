/**
 * The whole chain on the invented demo plant (DEMO DATA - INVENTED), over a shortened
 * 14-day history: samples -> compute -> analysis (baseline, drift) -> alerts -> monthly
 * export. The scenario plants known faults (services/demo/src/scenario.ts), so the checks
 * compare against the truth it put in, not against numbers typed here.
 */
import { mkdtemp, rm } from 'node:fs/promises';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import { type PreparedDemo, prepareDemo, scriptedLoss } from '@isentrope/demo';
import { backfill, backfillAnalysis, gatherMonth, runAlertsOnce } from '@isentrope/jobs';
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { buildMonthlyReport } from '../../packages/monitor/src/report/monthly.js';
import { createTestDatabase, type TestDatabase } from '../support/database.js';

const DAY = 86_400_000;
// A fixed "now", so the 14 days fall inside one calendar month (2026-03-15 to 2026-03-29).
const NOW = Date.parse('2026-03-29T00:00:00Z');

interface AlertRow {
  slug: string;
  category: 'drift' | 'instrument';
  level: 'warning' | 'alarm';
  tag: string | null;
  message: string;
  evidence: Record<string, unknown>;
}

describe('demo plant, end to end over 14 days', () => {
  let db: TestDatabase;
  let dataDir: string;
  let demo: PreparedDemo;
  let alerts: AlertRow[];

  beforeAll(async () => {
    db = await createTestDatabase();
    dataDir = await mkdtemp(join(tmpdir(), 'isentrope-demo-chain-'));
    demo = await prepareDemo({ pool: db.pool, dataDir, days: 14, now: () => NOW });
    await backfill(db.pool, { from: demo.span.start, to: demo.historyEnd });
    await backfillAnalysis(db.pool, { nowMs: demo.historyEnd });
    // The alert job judges minute by minute from where it last stopped; catch up the whole span.
    await runAlertsOnce(db.pool, { nowMs: demo.historyEnd, maxCatchUpMs: 15 * DAY });
    const rows = await db.pool.query<AlertRow>(
      `SELECT m.slug, a.category, a.level, t.name AS tag, a.message, a.evidence
         FROM alerts a JOIN machines m ON m.id = a.machine_id LEFT JOIN tags t ON t.id = a.tag_id
        ORDER BY a.raised_at`,
    );
    alerts = rows.rows;
  }, 900_000);

  afterAll(async () => {
    await db?.drop();
    if (dataDir !== undefined) await rm(dataDir, { recursive: true, force: true });
  });

  it('raises a drift alarm on the fouling air compressor ac-1, with its evidence and the caution', () => {
    const drift = alerts.filter((a) => a.slug === 'ac-1' && a.category === 'drift');
    expect(drift.length).toBeGreaterThan(0);
    expect(drift.some((a) => a.level === 'alarm')).toBe(true);
    for (const a of drift) {
      expect(a.message).toContain('qualified engineers');
      expect(a.evidence).toHaveProperty('caution');
    }
  });

  it('reports the stuck discharge-pressure transmitter of bfp-1 as an instrument fault, not as drift', () => {
    const instrument = alerts.filter((a) => a.slug === 'bfp-1' && a.category === 'instrument');
    expect(instrument.map((a) => a.tag)).toContain('BFP1.PI-20');
    expect(alerts.filter((a) => a.slug === 'bfp-1' && a.category === 'drift')).toEqual([]);
  });

  it('catches the gauge/absolute mix-up on the gas booster inlet pressure GB1.PI-10', async () => {
    const instrument = alerts.filter((a) => a.slug === 'gb-1' && a.category === 'instrument');
    expect(instrument.map((a) => a.tag)).toContain('GB1.PI-10');
    // The mix-up starts at 80 % of the span: results after it carry the fault flag.
    const flagged = await db.pool.query<{ n: number }>(
      `SELECT count(*)::int AS n FROM results r JOIN machines m ON m.id = r.machine_id
        WHERE m.slug = 'gb-1' AND r.time > to_timestamp($1::float8 / 1000)
          AND EXISTS (SELECT 1 FROM unnest(r.flags) f WHERE f LIKE 'fault:gauge-absolute%')`,
      [demo.span.start + 0.82 * (demo.span.end - demo.span.start)],
    );
    expect(flagged.rows[0]?.n ?? 0).toBeGreaterThan(0);
  });

  it('shows in the monthly export the degradation the scenario put into ac-1', async () => {
    const report = buildMonthlyReport(
      await gatherMonth(db.pool, '2026-03', { nowMs: NOW, minPointsPerDay: 60 }),
    );
    const ac1 = report.machines.find((m) => m.slug === 'ac-1');
    expect(ac1).toBeDefined();
    if (ac1 === undefined) return;
    // Daily drift means follow the scripted loss (truth from services/demo/src/scenario.ts) within
    // 1 point of efficiency, once the fouling has begun.
    const fouling = ac1.days.filter((d) => d.t > demo.span.start + 0.3 * (demo.span.end - demo.span.start));
    expect(fouling.length).toBeGreaterThan(5);
    for (const d of fouling) {
      const truth = -scriptedLoss(demo.span, 'ac-1', d.t + DAY / 2);
      expect(Math.abs(d.driftPts - truth)).toBeLessThan(1);
    }
    // The Theil-Sen rate over the month: the scripted fouling rate is 6 points over 75 % of the
    // 14 days; the rate also sees the flat first quarter, so it may only fall short, by at most 30 %.
    const trueRate = -(6 / (0.75 * 14)) * 30.44; // [points per month]
    expect(ac1.ratePtsPerMonth).not.toBeNull();
    expect(ac1.ratePtsPerMonth ?? 0).toBeLessThan(0.7 * trueRate);
    expect(ac1.ratePtsPerMonth ?? 0).toBeGreaterThan(1.1 * trueRate);
    expect(report.caution).toContain('qualified engineers');
  });
});
