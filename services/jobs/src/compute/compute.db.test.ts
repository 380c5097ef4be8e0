import type { ResultRow } from '@isentrope/compute';
import { defaultFluidResolver, type FluidResolver } from '@isentrope/compute';
import { perfectGas } from '@isentrope/thermo';
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { createTestDatabase, type TestDatabase } from '../../../../test/support/database.js';
import { readResults } from '../queries/results.js';
import {
  flowFraction,
  type SeededMachine,
  SYNTHETIC_AIR_COMPRESSOR,
  type SyntheticMachine,
  seedMachine,
  seedSamples,
  seedSite,
  trueEfficiency,
} from '../testing/synthetic.js';
import { backfill, runComputeOnce } from './job.js';

// Air as a constant-cp perfect gas (R = 287.05 J/(kg K), cp = 1005 J/(kg K), common practice, no
// source): the synthetic truth is made with the same model, so any error is the pipeline's.
const AIR = perfectGas(287.05, 1005, 'air (constant cp)');
const fluids: FluidResolver = (spec) => (spec === 'air' ? AIR : defaultFluidResolver(spec));

const T0 = Date.UTC(2026, 0, 5);
const DAY = 86_400_000;
const H = 3_600_000;
const END = T0 + 2 * DAY;
const STARTUP = { from: T0, to: T0 + 2 * H + 30 * 60_000 }; // stopped 2 h, then a 30 min ramp
const TRIP = { from: T0 + 20 * H, to: T0 + 20 * H + 40 * 60_000 }; // falls to zero and restarts
const STUCK = { fromMs: T0 + 30 * H, toMs: T0 + 32 * H };

function flow(t: number): number {
  if (t < T0 + 2 * H) return 0;
  if (t < STARTUP.to) return (flowFraction(t) * (t - T0 - 2 * H)) / (30 * 60_000);
  if (t >= TRIP.from && t < TRIP.from + 5 * 60_000)
    return flowFraction(t) * (1 - (t - TRIP.from) / (5 * 60_000));
  if (t >= TRIP.from + 5 * 60_000 && t < TRIP.from + 15 * 60_000) return 0;
  if (t >= TRIP.from + 15 * 60_000 && t < TRIP.to)
    return (flowFraction(t) * (t - TRIP.from - 15 * 60_000)) / (25 * 60_000);
  return flowFraction(t);
}

const EXPANDER: SyntheticMachine = {
  slug: 'ex-1',
  kind: 'turbine',
  pIn: 6e5,
  tIn: 520,
  pOut: 1.5e5,
  massFlow: 5,
  eta0: 0.84,
  ratePtsPerDay: -0.05,
};
const COMPRESSOR = SYNTHETIC_AIR_COMPRESSOR;

let db: TestDatabase;
let ex: SeededMachine;
let ac: SeededMachine;
const backfilled = new Map<number, ResultRow[]>();

beforeAll(async () => {
  db = await createTestDatabase();
  const site = await seedSite(db.pool);
  ex = await seedMachine(db.pool, site, EXPANDER);
  ac = await seedMachine(db.pool, site, COMPRESSOR);
  await seedSamples(db.pool, AIR, EXPANDER, ex, { fromMs: T0, toMs: END, flow, seed: 11 });
  await seedSamples(db.pool, AIR, COMPRESSOR, ac, {
    fromMs: T0,
    toMs: END,
    flow,
    seed: 12,
    stuckOutletT: STUCK,
  });
  // The synthetic writer stores quality 0; stored quality is the OPC DA byte (192 good, 0 bad, as
  // services/ingest writes it), so the seeded samples are marked good here.
  await db.pool.query('UPDATE samples SET quality = 192');
  const stats = await backfill(db.pool, { from: T0, to: END - H, fluids });
  expect(stats.points).toBe((2 * (END - H - T0)) / 60_000);
  for (const s of [ex, ac]) backfilled.set(s.machineId, await readResults(db.pool, s.machineId, T0, END));
});

afterAll(async () => {
  await db?.drop();
});

describe('compute job on a synthetic expander and compressor (invented data, perfect-gas air)', () => {
  it('recovers the true efficiency within its stated uncertainty at steady valid points', () => {
    for (const [m, s] of [
      [EXPANDER, ex],
      [COMPRESSOR, ac],
    ] as const) {
      const rows = (backfilled.get(s.machineId) ?? []).filter(
        (r) => r.steady && r.valid && r.efficiency !== null,
      );
      expect(rows.length).toBeGreaterThan(1500);
      let within = 0;
      let sumErr = 0;
      let sumU = 0;
      for (const r of rows) {
        const truth = trueEfficiency(m, T0, r.time, flowFraction(r.time));
        const err = (r.efficiency as number) - truth;
        sumErr += err;
        sumU += r.uEfficiency as number;
        // k = 2 expanded uncertainty, about 95 % (GUM, JCGM 100:2008, 6.2-6.3).
        if (Math.abs(err) <= 2 * (r.uEfficiency as number)) within++;
      }
      expect(within / rows.length).toBeGreaterThan(0.9);
      // The mean error is far inside the mean point uncertainty (noise averages out; common practice, no source).
      expect(Math.abs(sumErr / rows.length)).toBeLessThan(0.25 * (sumU / rows.length));
    }
  });

  it('leaves start-up and trip points out (not steady, or not valid)', () => {
    for (const s of [ex, ac]) {
      const rows = backfilled.get(s.machineId) ?? [];
      const inTransient = rows.filter(
        (r) => (r.time >= STARTUP.from && r.time < STARTUP.to) || (r.time >= TRIP.from && r.time < TRIP.to),
      );
      expect(inTransient.length).toBe((STARTUP.to - STARTUP.from + TRIP.to - TRIP.from) / 60_000);
      expect(
        inTransient.filter((r) => r.steady && r.valid).map((r) => [(r.time - T0) / 60_000, r.flags]),
      ).toEqual([]);
      // Each such point says why: at rest (not running) or in the ramp (not steady).
      expect(
        inTransient.filter((r) => !r.flags.includes('not-steady') && !r.flags.includes('not-running')),
      ).toEqual([]);
      expect(inTransient.filter((r) => r.flags.includes('not-running')).length).toBeGreaterThan(100);
    }
  });

  it('flags a stuck outlet transmitter as an instrument fault and the points as not valid', () => {
    const rows = (backfilled.get(ac.machineId) ?? []).filter(
      (r) => r.time >= STUCK.fromMs + 30 * 60_000 && r.time < STUCK.toMs,
    );
    expect(rows.length).toBe(90);
    for (const r of rows) {
      expect(r.flags).toContain('fault:stuck:outletTemperature');
      expect(r.valid).toBe(false);
    }
    const other = (backfilled.get(ex.machineId) ?? []).filter((r) =>
      r.flags.some((f) => f.startsWith('fault:stuck')),
    );
    expect(other).toEqual([]);
  });

  it('incremental runs write exactly the rows the backfill wrote', async () => {
    await db.pool.query('DELETE FROM results');
    // Odd step (37 min) so runs end mid-segment; settle and horizon as in production.
    let runs = 0;
    for (let now = T0 + 10 * 60_000; now <= END; now += 37 * 60_000) {
      const stats = await runComputeOnce(db.pool, { nowMs: now, fluids, maxCatchUpMs: 3 * H });
      expect(stats.failed).toBe(0);
      runs++;
    }
    expect(runs).toBeGreaterThan(70);
    for (const s of [ex, ac]) {
      const inc = await readResults(db.pool, s.machineId, T0, END - H);
      expect(inc.length).toBe((END - H - T0) / 60_000);
      const ref = (backfilled.get(s.machineId) ?? []).filter((r) => r.time < END - H);
      const firstDiff = inc.findIndex((r, i) => JSON.stringify(r) !== JSON.stringify(ref[i]));
      expect(firstDiff === -1 ? undefined : [inc[firstDiff], ref[firstDiff]]).toBeUndefined();
      expect(inc).toEqual(ref);
    }
  });

  it('recomputes a machine from its first sample when a tag changes', async () => {
    const before = await readResults(db.pool, ex.machineId, T0 + 10 * H, T0 + 11 * H);
    await db.pool.query(`UPDATE tags SET uncertainty = '{"absolute": 0.6}' WHERE id = $1`, [
      ex.tagIds.outletTemperature,
    ]);
    const stats = await runComputeOnce(db.pool, { nowMs: END, fluids, maxCatchUpMs: 3 * DAY });
    expect(stats.recomputed).toBe(1);
    const after = await readResults(db.pool, ex.machineId, T0 + 10 * H, T0 + 11 * H);
    const i = after.findIndex((r) => r.uEfficiency !== null);
    expect(i).toBeGreaterThanOrEqual(0);
    // Twice the outlet-temperature uncertainty: the efficiency uncertainty grows (GUM eq. 10).
    expect(after[i]?.uEfficiency as number).toBeGreaterThan(1.2 * (before[i]?.uEfficiency as number));
    expect(after[i]?.efficiency).toBe(before[i]?.efficiency);
  });
  it('on a 5-minute grid (gridMs), incremental runs write exactly the rows the backfill wrote', async () => {
    const G = 300_000;
    const from = T0 + 6 * H;
    const to = T0 + 31 * H;
    await db.pool.query('DELETE FROM results');
    await backfill(db.pool, { from, to, fluids, gridMs: G });
    const ref = await readResults(db.pool, ac.machineId, from, to);
    expect(ref.length).toBe((to - from) / G);
    expect(ref.every((r) => r.time % G === 0)).toBe(true);
    await db.pool.query('DELETE FROM results');
    await db.pool.query(`DELETE FROM job_watermarks WHERE job = 'compute'`);
    // Watermarks start at the first sample; runs every 70 minutes end mid-segment (5 h segments).
    for (let now = T0 + 20 * 60_000; now <= END; now += 70 * 60_000) {
      const stats = await runComputeOnce(db.pool, { nowMs: now, fluids, gridMs: G, maxCatchUpMs: 4 * H });
      expect(stats.failed).toBe(0);
    }
    const inc = await readResults(db.pool, ac.machineId, from, to);
    expect(inc).toEqual(ref);
  });
});
