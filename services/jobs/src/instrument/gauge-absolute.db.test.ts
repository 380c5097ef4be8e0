import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { createTestDatabase, type TestDatabase } from '../../../../test/support/database.js';
import { runAlertsOnce } from '../alerts/job.js';
import { rng, seedBaseline, seedTestMachine, seedTestSite } from '../alerts/seed.js';
import { runAnalysisOnce } from '../analysis/job.js';
import { ensureResultPartitions } from '../queries/results.js';
import { runGaugeAbsoluteOnce } from './gauge-absolute.js';

// The fault pattern (a lasting shift of one ambient pressure) is common practice, no source.
// Standard atmosphere 101 325 Pa: ISO 2533 (the test site's ambient is configured as 1.01325 bara).
// Everything seeded below is invented test data.
const ATM = 101_325;
const MIN = 60_000;
const H = 3_600_000;
const DAY = 86_400_000;
const T0 = Date.UTC(2026, 1, 2);
const END = T0 + 2 * DAY;
/** The step, 36 h in. */
const S = T0 + 36 * H;
const BANDS = { warning: 2, alarm: 4, onDelayS: 900, offDelayS: 900, deadband: 0.5 };
/**
 * Polytropic temperature exponent of the invented air compressor: m = (k - 1) / (k eta_p) with
 * k = 1.4 and eta_p = 0.8 (ideal-gas polytropic relation, ASME PTC 10; the figures are invented).
 */
const M_EXP = 0.4 / (1.4 * 0.8);

let db: TestDatabase;
let siteId: number;

beforeAll(async () => {
  db = await createTestDatabase();
  siteId = await seedTestSite(db.pool, 'gauge-works');
});
afterAll(async () => {
  await db?.drop();
});

interface Truth {
  /** True inlet and outlet pressure [Pa]. */
  pIn: number;
  pOut: number;
  /** Added to the inlet reading [Pa] (the mix-up). */
  inletError: number;
  /** Efficiency the compute job would report [-]. */
  efficiency: number;
}

/** One result a minute over [T0, END): pressures with 0.02 bar noise, temperatures following the true pressures. */
async function seedCompressorResults(
  machineId: number,
  truth: (t: number) => Truth,
  seed: number,
): Promise<void> {
  const z = rng(seed);
  const t: number[] = [];
  const pIn: number[] = [];
  const pOut: number[] = [];
  const tIn: number[] = [];
  const tOut: number[] = [];
  const eff: number[] = [];
  for (let ti = T0; ti < END; ti += MIN) {
    const x = truth(ti);
    const TIn = 300 + 0.1 * z.normal();
    t.push(ti);
    pIn.push(x.pIn + x.inletError + 2000 * z.normal());
    pOut.push(x.pOut + 2000 * z.normal());
    tIn.push(TIn);
    tOut.push(TIn * (x.pOut / x.pIn) ** M_EXP + 0.1 * z.normal());
    eff.push(x.efficiency);
  }
  await ensureResultPartitions(db.pool, T0, END);
  await db.pool.query(
    `INSERT INTO results (machine_id, time, p_in, p_out, t_in, t_out, efficiency, u_efficiency, operating_point,
                          steady, valid, flags, computed_at)
     SELECT $1, to_timestamp(u.t / 1000), u.pi, u.po, u.ti, u.tout, u.e, 0.001, 50, true, true, '{}', clock_timestamp()
       FROM unnest($2::float8[], $3::float8[], $4::float8[], $5::float8[], $6::float8[], $7::float8[])
         AS u(t, pi, po, ti, tout, e)`,
    [machineId, t, pIn, pOut, tIn, tOut, eff],
  );
  // Queued for the analysis job, as every writer of results queues what it wrote.
  await db.pool.query(
    `INSERT INTO analysis_pending (machine_id, from_time, to_time)
     VALUES ($1, to_timestamp($2::float8 / 1000), to_timestamp($3::float8 / 1000))`,
    [machineId, T0, END],
  );
}

async function compressor(slug: string): Promise<{ id: number; tags: Record<string, number> }> {
  const m = await seedTestMachine(db.pool, siteId, slug, {
    bands: BANDS,
    roles: ['inletPressure', 'inletTemperature', 'outletPressure', 'outletTemperature'],
  });
  await seedBaseline(db.pool, m.id, [0.8], T0 - 10 * DAY, T0 - DAY);
  return m;
}

async function flagged(
  machineId: number,
  flag: string,
): Promise<{ n: number; first: number | null; invalid: number }> {
  const r = await db.pool.query<{ n: number; first: number | null; invalid: number }>(
    `SELECT count(*)::int AS n, (extract(epoch FROM min(time)) * 1000)::float8 AS first,
            count(*) FILTER (WHERE NOT valid)::int AS invalid
       FROM results WHERE machine_id = $1 AND $2 = ANY(flags)`,
    [machineId, flag],
  );
  return r.rows[0] as { n: number; first: number | null; invalid: number };
}

async function snapshot(machineId: number): Promise<unknown> {
  const rows = await db.pool.query(
    `SELECT time, flags, valid FROM results WHERE machine_id = $1 ORDER BY time`,
    [machineId],
  );
  const findings = await db.pool.query(
    `SELECT role, at, ended_at, status, cross_check FROM instrument_findings WHERE machine_id = $1 ORDER BY id`,
    [machineId],
  );
  return { rows: rows.rows, findings: findings.rows };
}

const rowsFromStep = (END - S) / MIN;

/** Inlet 5 bar(a), outlet 10 bar(a), efficiency 0.80; after S the inlet tag reads one ambient high
 * and the computed efficiency falls to 0.74 (6 points, beyond the 4-point alarm), as a wrong inlet
 * pressure would make it. */
const mixUp = (t: number): Truth =>
  t >= S
    ? { pIn: 5e5, pOut: 10e5, inletError: ATM, efficiency: 0.74 }
    : { pIn: 5e5, pOut: 10e5, inletError: 0, efficiency: 0.8 };

describe('gauge/absolute step in the jobs', () => {
  it('without the step, the same mix-up raises a false drift alarm (the control)', async () => {
    const m = await compressor('ctl-1');
    await seedCompressorResults(m.id, mixUp, 11);
    await runAnalysisOnce(db.pool, { nowMs: END, machineIds: [m.id] });
    await runAlertsOnce(db.pool, { nowMs: END, machineIds: [m.id], maxCatchUpMs: 3 * DAY });
    const a = await db.pool.query<{ category: string }>(`SELECT category FROM alerts WHERE machine_id = $1`, [
      m.id,
    ]);
    expect(a.rows.map((r) => r.category)).toContain('drift');
  });

  it('flags a +1 atm inlet step from the step on, raises an instrument alert on the inlet tag after the on-delay, and no drift alert', async () => {
    const m = await compressor('mix-1');
    await seedCompressorResults(m.id, mixUp, 11);
    const stats = await runGaugeAbsoluteOnce(db.pool, { nowMs: END, machineIds: [m.id] });
    expect(stats).toMatchObject({ standing: 1, dismissed: 0, reverted: 0, flaggedRows: rowsFromStep });
    const f = await flagged(m.id, 'fault:gauge-absolute:inletPressure');
    // 0.02 bar noise against a 1 bar step: the detector's split is exact (monitor tests).
    expect(f).toEqual({ n: rowsFromStep, first: S, invalid: rowsFromStep });
    expect((await flagged(m.id, 'fault:gauge-absolute:outletPressure')).n).toBe(0);

    const finding = await db.pool.query(
      `SELECT tag_id, direction, likely_cause, shift_pa, shift_ambients, ambient_pa, cross_check, cross_check_detail, status
         FROM instrument_findings WHERE machine_id = $1`,
      [m.id],
    );
    expect(finding.rows).toHaveLength(1);
    const row = finding.rows[0];
    expect(row).toMatchObject({
      tag_id: m.tags.inletPressure,
      direction: 'reads-high',
      likely_cause: 'absolute transmitter on a gauge tag',
      ambient_pa: ATM,
      cross_check: 'mix-up',
      status: 'standing',
    });
    // Median of 15 readings with sigma 2000 Pa: well within 3000 Pa of one ambient.
    expect(Math.abs(row.shift_pa - ATM)).toBeLessThan(3000);
    expect(row.cross_check_detail).toMatchObject({
      mixUp: { tag: 'inlet', direction: 'reads-high' },
      agrees: true,
    });

    await runAnalysisOnce(db.pool, { nowMs: END, machineIds: [m.id] });
    await runAlertsOnce(db.pool, { nowMs: END, machineIds: [m.id], maxCatchUpMs: 3 * DAY });
    const alerts = await db.pool.query<{ category: string; tag_id: number | null; raised_at: Date }>(
      `SELECT category, tag_id, raised_at FROM alerts WHERE machine_id = $1`,
      [m.id],
    );
    expect(alerts.rows.map((a) => a.category)).toEqual(['instrument']);
    const a = alerts.rows[0];
    expect(a?.tag_id).toBe(m.tags.inletPressure);
    // The fault holds from S; the 900 s on-delay ends at S + 15 min (the band rule, common practice, no source).
    expect(a?.raised_at.getTime()).toBe(S + 15 * MIN);
  });

  it('changes nothing when run twice, and puts the flag back on rows the compute job rewrote', async () => {
    const m = await compressor('mix-2');
    await seedCompressorResults(m.id, mixUp, 12);
    await runGaugeAbsoluteOnce(db.pool, { nowMs: END, machineIds: [m.id] });
    const before = await snapshot(m.id);
    const again = await runGaugeAbsoluteOnce(db.pool, { nowMs: END, machineIds: [m.id] });
    expect(again).toMatchObject({
      standing: 0,
      dismissed: 0,
      reverted: 0,
      flaggedRows: 0,
      notPositiveRows: 0,
    });
    expect(await snapshot(m.id)).toEqual(before);

    // A recompute rewrites the rows without the flag (and valid again).
    await db.pool.query(
      `UPDATE results SET flags = '{}', valid = true, computed_at = clock_timestamp() WHERE machine_id = $1`,
      [m.id],
    );
    expect((await flagged(m.id, 'fault:gauge-absolute:inletPressure')).n).toBe(0);
    const back = await runGaugeAbsoluteOnce(db.pool, { nowMs: END, machineIds: [m.id] });
    expect(back).toMatchObject({ standing: 0, flaggedRows: rowsFromStep });
    expect(await snapshot(m.id)).toEqual(before);
  });

  it('keeps flagging after the step has left the trailing window (the finding is stored)', async () => {
    const m = await compressor('mix-3');
    await seedCompressorResults(m.id, mixUp, 13);
    await runGaugeAbsoluteOnce(db.pool, { nowMs: END, machineIds: [m.id] });
    await db.pool.query(`UPDATE results SET flags = '{}', valid = true WHERE machine_id = $1`, [m.id]);
    // A 6-hour window ending at END no longer holds the step at S (END - 12 h).
    const r = await runGaugeAbsoluteOnce(db.pool, { nowMs: END, machineIds: [m.id], windowMs: 6 * H });
    expect(r.flaggedRows).toBe(rowsFromStep);
  });

  it('gives nothing for a real 0.5 bar inlet change, nor for a real 1 atm change the temperatures follow', async () => {
    const half = await compressor('real-1');
    await seedCompressorResults(
      half.id,
      (t) => ({ pIn: t >= S ? 5.5e5 : 5e5, pOut: 10e5, inletError: 0, efficiency: 0.8 }),
      14,
    );
    const r1 = await runGaugeAbsoluteOnce(db.pool, { nowMs: END, machineIds: [half.id] });
    expect(r1).toMatchObject({ standing: 0, dismissed: 0, flaggedRows: 0 });
    const one = await compressor('real-2');
    await seedCompressorResults(
      one.id,
      (t) => ({ pIn: t >= S ? 5e5 + ATM : 5e5, pOut: 10e5, inletError: 0, efficiency: 0.8 }),
      15,
    );
    // The tag alone sees one ambient; the outlet temperature follows the new ratio: dismissed.
    const r2 = await runGaugeAbsoluteOnce(db.pool, { nowMs: END, machineIds: [one.id] });
    expect(r2).toMatchObject({ standing: 0, dismissed: 1, flaggedRows: 0 });
    const f = await db.pool.query(
      `SELECT status, cross_check FROM instrument_findings WHERE machine_id = $1`,
      [one.id],
    );
    expect(f.rows).toEqual([{ status: 'dismissed', cross_check: 'consistent' }]);
    for (const id of [half.id, one.id]) {
      const n = await db.pool.query<{ n: number }>(
        `SELECT count(*)::int AS n FROM results WHERE machine_id = $1 AND (NOT valid OR cardinality(flags) > 0)`,
        [id],
      );
      expect(n.rows[0]?.n).toBe(0);
    }
  });

  it('flags an absolute pressure at or below zero point by point', async () => {
    const m = await compressor('neg-1');
    // A gauge transmitter on the absolute inlet tag of a machine drawing slightly below atmosphere.
    await seedCompressorResults(m.id, () => ({ pIn: 5e5, pOut: 10e5, inletError: 0, efficiency: 0.8 }), 16);
    await db.pool.query(
      `UPDATE results SET p_in = -800 WHERE machine_id = $1 AND time >= to_timestamp($2::float8 / 1000)
          AND time < to_timestamp($3::float8 / 1000)`,
      [m.id, END - 10 * MIN, END - 5 * MIN],
    );
    const r = await runGaugeAbsoluteOnce(db.pool, { nowMs: END, machineIds: [m.id] });
    expect(r.notPositiveRows).toBe(5);
    expect(await flagged(m.id, 'fault:pressure-not-positive:inletPressure')).toEqual({
      n: 5,
      first: END - 10 * MIN,
      invalid: 5,
    });
  });
});
