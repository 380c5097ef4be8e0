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
import { backfill, backfillAnalysis, runAlertsOnce } from '@isentrope/jobs';
import { gatherMonth } from '@isentrope/monitor';
import { monthlyFigures } from '@isentrope/store';
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
  raised_at: Date;
  condition_since: Date | null;
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
      `SELECT m.slug, a.category, a.level, t.name AS tag, a.message, a.evidence, a.raised_at, a.condition_since
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

  it('dates the ac-1 drift alarm from when the scripted fouling crossed the alarm level', () => {
    const alarm = alerts.find((a) => a.slug === 'ac-1' && a.category === 'drift' && a.level === 'alarm');
    expect(alarm).toBeDefined();
    if (alarm === undefined) return;
    const alarmPts = (alarm.evidence.band as { alarmPts: number }).alarmPts;
    // Truth: the first minute at which the scripted loss (services/demo/src/scenario.ts) is beyond the alarm level.
    let crossing = demo.span.start;
    while (-scriptedLoss(demo.span, 'ac-1', crossing) >= alarmPts) crossing += 60_000;
    expect(crossing).toBeLessThan(demo.span.end);
    const since = alarm.condition_since?.getTime() ?? Number.NaN;
    // Within a day: the loss grows 0.57 points a day here (6 points over 10.5 days), so a day is
    // about half a point of drift, inside the 1-point agreement of the daily means checked below.
    expect(Math.abs(since - crossing)).toBeLessThanOrEqual(DAY);
    // Not after the alarm was raised (the escalation from the warning the row was first raised with).
    expect(since).toBeLessThanOrEqual(Date.parse(alarm.evidence.raisedAt as string));
    expect(alarm.evidence.conditionSince).toBe(new Date(since).toISOString().replace('.000Z', 'Z'));
    expect(alarm.message).toContain(`condition since ${alarm.evidence.conditionSince}`);
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
    // The alert dates the fault from the finding: the first result at the new level, at 80 % of
    // the span (scenario truth), within the hour.
    const mixUp = instrument.find(
      (a) => a.tag === 'GB1.PI-10' && (a.evidence.faults as string[]).includes('gauge-absolute'),
    );
    expect(mixUp?.evidence.conditionSinceBasis).toContain('instrument finding');
    const since = mixUp?.condition_since?.getTime() ?? Number.NaN;
    expect(Math.abs(since - (demo.span.start + 0.8 * (demo.span.end - demo.span.start)))).toBeLessThanOrEqual(
      3_600_000,
    );
  });

  it('shows in the monthly export the degradation the scenario put into ac-1', async () => {
    const report = buildMonthlyReport(
      await gatherMonth(monthlyFigures(db.pool), '2026-03', { generatedAtMs: NOW, minPointsPerDay: 60 }),
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

  // Last: it clears the alerts of two machines and runs the alert job again.
  it('on a first start (the alert job judging only the last day) dates the ac-1 alarm and the gb-1 mix-up from the history', async () => {
    const ids = await db.pool.query<{ id: number; slug: string }>(
      `SELECT id, slug FROM machines WHERE slug IN ('ac-1', 'gb-1')`,
    );
    const machineIds = ids.rows.map((r) => r.id);
    await db.pool.query(
      `DELETE FROM deliveries WHERE alert_event_id IN
         (SELECT e.id FROM alert_events e JOIN alerts a ON a.id = e.alert_id WHERE a.machine_id = ANY($1))`,
      [machineIds],
    );
    await db.pool.query(
      `DELETE FROM alert_events WHERE alert_id IN (SELECT id FROM alerts WHERE machine_id = ANY($1))`,
      [machineIds],
    );
    await db.pool.query(`DELETE FROM alerts WHERE machine_id = ANY($1)`, [machineIds]);
    await db.pool.query(`DELETE FROM alert_band_state WHERE machine_id = ANY($1)`, [machineIds]);
    // As services/cli's start does: once, as of the end of the history, with the default catch-up of 24 h.
    await runAlertsOnce(db.pool, { nowMs: demo.historyEnd, machineIds });
    const rows = await db.pool.query<AlertRow>(
      `SELECT m.slug, a.category, a.level, t.name AS tag, a.message, a.evidence, a.raised_at, a.condition_since
         FROM alerts a JOIN machines m ON m.id = a.machine_id LEFT JOIN tags t ON t.id = a.tag_id
        WHERE a.machine_id = ANY($1)`,
      [machineIds],
    );
    const alarm = rows.rows.find((a) => a.slug === 'ac-1' && a.category === 'drift');
    expect(alarm?.level).toBe('alarm');
    if (alarm === undefined) return;
    // Raised in the last day, yet the condition dates from when the scripted loss
    // (services/demo/src/scenario.ts) crossed the alarm level, days earlier, to the day.
    expect(alarm.raised_at.getTime()).toBeGreaterThan(demo.historyEnd - DAY);
    const alarmPts = (alarm.evidence.band as { alarmPts: number }).alarmPts;
    let crossing = demo.span.start;
    while (-scriptedLoss(demo.span, 'ac-1', crossing) >= alarmPts) crossing += 60_000;
    const since = alarm.condition_since?.getTime() ?? Number.NaN;
    expect(alarm.evidence.conditionSinceBasis).toContain('daily mean');
    expect(Math.abs(since - crossing)).toBeLessThanOrEqual(DAY);
    const mixUp = rows.rows.find((a) => a.tag === 'GB1.PI-10');
    expect(mixUp?.raised_at.getTime()).toBeGreaterThan(demo.historyEnd - DAY);
    expect(mixUp?.evidence.conditionSinceBasis).toContain('instrument finding');
    expect(
      Math.abs(
        (mixUp?.condition_since?.getTime() ?? Number.NaN) -
          (demo.span.start + 0.8 * (demo.span.end - demo.span.start)),
      ),
    ).toBeLessThanOrEqual(3_600_000);
  });
});
