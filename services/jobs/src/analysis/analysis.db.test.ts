import { CAUTION, evaluateBaseline } from '@isentrope/monitor';
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { createTestDatabase, type TestDatabase } from '../../../../test/support/database.js';
import {
  rng,
  type SeedResult,
  seedBaseline,
  seedResults,
  seedTestMachine,
  seedTestSite,
} from '../alerts/seed.js';
import { readActiveBaseline } from './baseline.js';
import { runAnalysisOnce } from './job.js';

let db: TestDatabase;
let siteId: number;
const DAY = 86_400_000;
const T0 = Date.UTC(2026, 2, 1); // invented data

beforeAll(async () => {
  db = await createTestDatabase();
  siteId = await seedTestSite(db.pool, 'analysis-works');
});
afterAll(async () => {
  await db?.drop();
});

// Invented true curve: eta(x) = 0.62 + 0.006 x - 0.00004 x^2 over mass flow x = 40..100 kg/s.
const curve = (x: number): number => 0.62 + 0.006 * x - 0.00004 * x * x;

describe('analysis', () => {
  it('fits the baseline on the reference period and recovers a known curve; drift follows', async () => {
    const m = await seedTestMachine(db.pool, siteId, 'fit', {
      baselineSpec: {
        operatingPoint: 'massFlow',
        reference: { from: new Date(T0).toISOString(), to: new Date(T0 + 3 * DAY).toISOString() },
        degree: 2,
      },
    });
    const r = rng(11);
    const rows: SeedResult[] = [];
    for (let t = T0; t < T0 + 4 * DAY; t += 5 * 60_000) {
      const x = 70 + 30 * Math.sin((2 * Math.PI * (t - T0)) / (0.7 * DAY));
      // After the reference period the machine has lost 1.5 points (invented).
      const loss = t >= T0 + 3 * DAY ? 0.015 : 0;
      rows.push({
        t,
        efficiency: curve(x) - loss + 0.002 * r.normal(),
        uEfficiency: 0.003,
        operatingPoint: x,
      });
    }
    // A transient that must not enter the fit: not steady, far off (invented).
    rows.push({
      t: T0 + 3600_000 + 1000,
      efficiency: 0.2,
      uEfficiency: 0.003,
      operatingPoint: 60,
      steady: false,
    });
    await seedResults(db.pool, m.id, rows);
    const out = await runAnalysisOnce(db.pool, { nowMs: T0 + 4 * DAY, machineIds: [m.id], stepMs: 300_000 });
    expect(out[0]?.baseline).toBe('fitted');
    const b = await readActiveBaseline(db.pool, m.id);
    expect(b).toBeDefined();
    // The fit recovers the curve within 3 of its own standard uncertainties (noise sd 0.002,
    // 864 points; common practice, no source) and within 0.001 absolute.
    for (const x of [45, 60, 75, 90, 99]) {
      const v = evaluateBaseline(b!.model, x);
      expect(Math.abs(v.efficiency - curve(x))).toBeLessThan(Math.max(3 * v.u, 1e-4));
      expect(Math.abs(v.efficiency - curve(x))).toBeLessThan(0.001);
    }
    const row = await db.pool.query<{ created_by: string; n: number; residual_std: number }>(
      `SELECT created_by, n, residual_std FROM baselines WHERE id = $1`,
      [b!.id],
    );
    expect(row.rows[0]?.created_by).toBe('system');
    expect(row.rows[0]?.n).toBe(864);
    expect(row.rows[0]?.residual_std).toBeCloseTo(0.002, 3);
    // Drift after the reference period: -1.5 points (the invented loss), per row and in the status.
    const d = await db.pool.query<{ drift: number; n: number }>(
      `SELECT avg(drift) AS drift, count(drift)::int AS n FROM results WHERE machine_id = $1 AND time >= $2 AND steady`,
      [m.id, new Date(T0 + 3 * DAY)],
    );
    expect(d.rows[0]?.n).toBe(288);
    expect(d.rows[0]?.drift).toBeCloseTo(-1.5, 1);
    const st = await db.pool.query<{
      drift_24h: number;
      u_drift_24h: number;
      coverage_1h: number;
      baseline_id: number;
      caution: string;
    }>(
      `SELECT drift_24h, u_drift_24h, coverage_1h, baseline_id::int, caution FROM machine_status WHERE machine_id = $1`,
      [m.id],
    );
    const s = st.rows[0]!;
    expect(Math.abs(s.drift_24h + 1.5)).toBeLessThan(2 * s.u_drift_24h);
    expect(s.coverage_1h).toBe(1);
    expect(s.baseline_id).toBe(b!.id);
    expect(s.caution).toBe(CAUTION);
  });

  it('recomputed rows are analysed again', async () => {
    const m = await seedTestMachine(db.pool, siteId, 'recompute');
    await seedBaseline(db.pool, m.id, [0.8], T0 - 2 * DAY, T0 - DAY);
    const rows = Array.from({ length: 60 }, (_, i) => ({
      t: T0 + i * 60_000,
      efficiency: 0.79,
      uEfficiency: 0.002,
      operatingPoint: 50,
    }));
    await seedResults(db.pool, m.id, rows);
    await runAnalysisOnce(db.pool, { nowMs: T0 + DAY, machineIds: [m.id] });
    // The compute job rewrites the rows (say a unit was corrected): efficiency 0.81 now.
    await seedResults(
      db.pool,
      m.id,
      rows.map((r) => ({ ...r, efficiency: 0.81 })),
    );
    const out = await runAnalysisOnce(db.pool, { nowMs: T0 + DAY, machineIds: [m.id] });
    expect(out[0]?.driftRows).toBe(60);
    const d = await db.pool.query<{ lo: number; hi: number }>(
      `SELECT min(drift) AS lo, max(drift) AS hi FROM results WHERE machine_id = $1`,
      [m.id],
    );
    // 100 (0.81 - 0.80) = +1 point (arithmetic).
    expect(d.rows[0]?.lo).toBeCloseTo(1, 9);
    expect(d.rows[0]?.hi).toBeCloseTo(1, 9);
  });

  it('a pass cut short by its batch limit leaves the rest queued, and the next pass finishes it', async () => {
    const m = await seedTestMachine(db.pool, siteId, 'batched');
    await seedBaseline(db.pool, m.id, [0.8], T0 - 2 * DAY, T0 - DAY);
    // Two separate spans of 30 rows, three hours apart.
    const rows = [0, 180].flatMap((start) =>
      Array.from({ length: 30 }, (_, i) => ({
        t: T0 + (start + i) * 60_000,
        efficiency: 0.78,
        uEfficiency: 0.002,
        operatingPoint: 50,
      })),
    );
    await seedResults(db.pool, m.id, rows.slice(0, 30));
    await seedResults(db.pool, m.id, rows.slice(30));
    const first = await runAnalysisOnce(db.pool, {
      nowMs: T0 + DAY,
      machineIds: [m.id],
      batchRows: 20,
      maxBatches: 2,
    });
    expect(first[0]?.driftRows).toBe(30); // 20, then the span's last 10
    const queued = await db.pool.query<{ a: Date; b: Date }>(
      'SELECT from_time AS a, to_time AS b FROM analysis_pending WHERE machine_id = $1',
      [m.id],
    );
    expect(queued.rows.map((r) => [r.a.getTime(), r.b.getTime()])).toEqual([
      [T0 + 180 * 60_000, T0 + 209 * 60_000 + 1],
    ]);
    const second = await runAnalysisOnce(db.pool, { nowMs: T0 + DAY, machineIds: [m.id], batchRows: 20 });
    expect(second[0]?.driftRows).toBe(30);
    const left = await db.pool.query<{ n: number; pending: number }>(
      `SELECT (SELECT count(*)::int FROM analysis_pending WHERE machine_id = $1) AS n,
              (SELECT count(*)::int FROM results WHERE machine_id = $1 AND (analyzed_at IS NULL OR analyzed_at <> computed_at)) AS pending`,
      [m.id],
    );
    expect(left.rows[0]).toEqual({ n: 0, pending: 0 });
    // A third pass has nothing to do.
    const third = await runAnalysisOnce(db.pool, { nowMs: T0 + DAY, machineIds: [m.id] });
    expect(third[0]?.driftRows).toBe(0);
  });

  it('a new baseline queues every row of the machine again', async () => {
    const m = await seedTestMachine(db.pool, siteId, 'rebaselined');
    await seedBaseline(db.pool, m.id, [0.8], T0 - 2 * DAY, T0 - DAY);
    const rows = Array.from({ length: 40 }, (_, i) => ({
      t: T0 + i * 60_000,
      efficiency: 0.79,
      uEfficiency: 0.002,
      operatingPoint: 50,
    }));
    await seedResults(db.pool, m.id, rows);
    await runAnalysisOnce(db.pool, { nowMs: T0 + DAY, machineIds: [m.id] });
    // The engineer fits a new baseline (say after an overhaul): the old one is retired.
    await db.pool.query('UPDATE baselines SET active = false WHERE machine_id = $1', [m.id]);
    await seedBaseline(db.pool, m.id, [0.78], T0 - 2 * DAY, T0 - DAY);
    const out = await runAnalysisOnce(db.pool, { nowMs: T0 + DAY, machineIds: [m.id] });
    expect(out[0]?.driftRows).toBe(40);
    const d = await db.pool.query<{ lo: number; hi: number }>(
      'SELECT min(drift) AS lo, max(drift) AS hi FROM results WHERE machine_id = $1',
      [m.id],
    );
    // 100 (0.79 - 0.78) = +1 point (arithmetic).
    expect(d.rows[0]?.lo).toBeCloseTo(1, 9);
    expect(d.rows[0]?.hi).toBeCloseTo(1, 9);
  });

  it('degradation rate from seeded drift within 10 % of the truth, with a forecast date', async () => {
    const m = await seedTestMachine(db.pool, siteId, 'degrading', {
      bands: { warning: 2, alarm: 4, onDelayS: 900, offDelayS: 900, deadband: 0.5 },
    });
    await seedBaseline(db.pool, m.id, [0.8], T0 - 2 * DAY, T0 - DAY);
    // Invented: a loss of 0.05 points a day (1.522 points per month of 30.44 days), noise sd 0.3
    // point per 10-minute point, 60 days.
    const rate = -0.05; // [points/day]
    const r = rng(5);
    const rows: SeedResult[] = [];
    for (let t = T0; t < T0 + 60 * DAY; t += 600_000) {
      const drift = (rate * (t - T0)) / DAY + 0.3 * r.normal();
      rows.push({ t, efficiency: 0.8 + drift / 100, uEfficiency: 0.002, operatingPoint: 50 });
    }
    await seedResults(db.pool, m.id, rows);
    await runAnalysisOnce(db.pool, {
      nowMs: T0 + 60 * DAY,
      machineIds: [m.id],
      stepMs: 600_000,
      minPointsPerDay: 100,
      maxBatches: Number.POSITIVE_INFINITY,
    });
    const st = await db.pool.query<{
      rate_pts_per_month: number;
      rate_low_pts_per_month: number;
      rate_high_pts_per_month: number;
      rate_days: number;
      forecast_status: string;
      forecast_at: Date;
      alarm_pts: number;
    }>(`SELECT * FROM machine_status WHERE machine_id = $1`, [m.id]);
    const s = st.rows[0]!;
    const truth = rate * 30.44;
    expect(s.rate_days).toBe(60);
    expect(Math.abs(s.rate_pts_per_month - truth)).toBeLessThan(0.1 * Math.abs(truth));
    expect(s.rate_low_pts_per_month).toBeLessThan(s.rate_pts_per_month);
    expect(s.rate_high_pts_per_month).toBeGreaterThan(s.rate_pts_per_month);
    expect(s.alarm_pts).toBe(-4);
    // The line reaches -4 points at day 80 (4 / 0.05); allow 10 % of the 80 days.
    expect(s.forecast_status).toBe('forecast');
    expect(Math.abs(s.forecast_at.getTime() - (T0 + 80 * DAY))).toBeLessThan(8 * DAY);
  });
});
