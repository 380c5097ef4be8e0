import { readdirSync, readFileSync } from 'node:fs';
import { join } from 'node:path';
import { defaultFluidResolver } from '@isentrope/compute';
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { createTestDatabase, type TestDatabase } from '../../../../test/support/database.js';
import { runAlertsOnce } from '../alerts/job.js';
import { runAnalysisOnce } from '../analysis/job.js';
import { backfill, runComputeOnce } from '../compute/job.js';
import {
  type SeededMachine,
  SYNTHETIC_AIR_COMPRESSOR,
  seedMachine,
  seedSamples,
  seedSite,
} from '../testing/synthetic.js';
import { runGaugeAbsoluteOnce } from './gauge-absolute.js';

// The fault pattern (a lasting shift of one ambient pressure) is common practice, no source.
// Standard atmosphere 1.01325 bar: ISO 2533 (the synthetic site's ambient is configured so).
// Everything seeded below is INVENTED test data (services/jobs/src/testing/synthetic.ts).
const ATM_BAR = 1.01325;
const MIN = 60_000;
const H = 3_600_000;
const DAY = 86_400_000;
const T0 = Date.UTC(2026, 1, 2);
const END = T0 + 2 * DAY;
/** Computed up to here (the lookahead of the last points needs samples beyond it). */
const UPTO = END - H;
/** The step, 36 h in. */
const S = T0 + 36 * H;
const IN = 'fault:gauge-absolute:inletPressure';

const COMPRESSOR = SYNTHETIC_AIR_COMPRESSOR;

/** Dry air, the model the compute pass uses for these machines. */
const AIR = defaultFluidResolver('air');

let db: TestDatabase;
let siteId: number;

beforeAll(async () => {
  db = await createTestDatabase();
  siteId = await seedSite(db.pool, 'gauge-works');
});
afterAll(async () => {
  await db?.drop();
});

/** A compressor with two days of samples; its barg inlet tag is fed absolute values over [from, to). */
async function mixedUp(slug: string, seed: number, from: number, to: number): Promise<SeededMachine> {
  const m = await seedMachine(db.pool, siteId, { ...COMPRESSOR, slug });
  await seedSamples(db.pool, AIR, { ...COMPRESSOR, slug }, m, { fromMs: T0, toMs: END, seed, flow: () => 1 });
  await db.pool.query(
    `UPDATE samples SET value = value + $2 WHERE tag_id = $1 AND time >= to_timestamp($3::float8 / 1000)
        AND time < to_timestamp($4::float8 / 1000)`,
    [m.tagIds.inletPressure, ATM_BAR, from, to],
  );
  // Stored quality is the OPC DA byte (192 good), as services/ingest writes it.
  await db.pool.query('UPDATE samples SET quality = 192 WHERE tag_id = ANY($1::int[])', [
    Object.values(m.tagIds),
  ]);
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

async function rowsFrom(machineId: number, fromMs: number, toMs: number): Promise<number> {
  const r = await db.pool.query<{ n: number }>(
    `SELECT count(*)::int AS n FROM results WHERE machine_id = $1
        AND time >= to_timestamp($2::float8 / 1000) AND time < to_timestamp($3::float8 / 1000)`,
    [machineId, fromMs, toMs],
  );
  return r.rows[0]?.n ?? 0;
}

async function snapshot(machineId: number): Promise<unknown> {
  const rows = await db.pool.query(
    `SELECT time, flags, valid, efficiency FROM results WHERE machine_id = $1 ORDER BY time`,
    [machineId],
  );
  const findings = await db.pool.query(
    `SELECT role, at, ended_at, status, cross_check FROM instrument_findings WHERE machine_id = $1 ORDER BY id`,
    [machineId],
  );
  return { rows: rows.rows, findings: findings.rows };
}

describe('gauge/absolute findings applied by the compute pass', () => {
  it('stores a +1 atm inlet step, has the compute pass flag the rows from it on, and a recompute keeps the flag', async () => {
    const m = await mixedUp('mix-1', 11, S, END);
    await backfill(db.pool, { from: T0, to: UPTO, machineIds: [m.machineId] });
    expect((await flagged(m.machineId, IN)).n).toBe(0);

    const stats = await runGaugeAbsoluteOnce(db.pool, { nowMs: UPTO, machineIds: [m.machineId] });
    const fromStep = await rowsFrom(m.machineId, S, UPTO);
    expect(fromStep).toBe((UPTO - S) / MIN);
    expect(stats).toMatchObject({ standing: 1, dismissed: 0, reverted: 0 });
    expect(stats.recomputedRows).toBeGreaterThanOrEqual(fromStep);
    // 0.01 bar noise against a 1 bar step: the detector's split is exact (monitor tests).
    expect(await flagged(m.machineId, IN)).toEqual({ n: fromStep, first: S, invalid: fromStep });
    expect((await flagged(m.machineId, 'fault:gauge-absolute:outletPressure')).n).toBe(0);
    const finding = await db.pool.query(
      `SELECT tag_id, direction, likely_cause, status FROM instrument_findings WHERE machine_id = $1`,
      [m.machineId],
    );
    expect(finding.rows).toEqual([
      {
        tag_id: m.tagIds.inletPressure,
        direction: 'reads-high',
        likely_cause: 'absolute transmitter on a gauge tag',
        status: 'standing',
      },
    ]);

    // A recompute of the range (a backfill, then the incremental pass) reads the finding again.
    const before = await snapshot(m.machineId);
    await backfill(db.pool, { from: T0, to: UPTO, machineIds: [m.machineId] });
    expect(await snapshot(m.machineId)).toEqual(before);
    await runComputeOnce(db.pool, { nowMs: END + 3 * MIN, machineIds: [m.machineId], maxCatchUpMs: 3 * DAY });
    const after = await flagged(m.machineId, IN);
    expect(after.first).toBe(S);
    expect(after.n).toBe(await rowsFrom(m.machineId, S, END + H));
    expect(after.n).toBeGreaterThan(fromStep);
  });

  it('changes nothing when run twice, nor once the step has left the trailing window', async () => {
    const m = await mixedUp('mix-2', 12, S, END);
    await backfill(db.pool, { from: T0, to: UPTO, machineIds: [m.machineId] });
    await runGaugeAbsoluteOnce(db.pool, { nowMs: UPTO, machineIds: [m.machineId] });
    const before = await snapshot(m.machineId);
    const again = await runGaugeAbsoluteOnce(db.pool, { nowMs: UPTO, machineIds: [m.machineId] });
    expect(again).toMatchObject({ standing: 0, dismissed: 0, reverted: 0, recomputedRows: 0 });
    // A 6-hour window ending at UPTO no longer holds the step at S (UPTO - 11 h).
    const later = await runGaugeAbsoluteOnce(db.pool, {
      nowMs: UPTO,
      machineIds: [m.machineId],
      windowMs: 6 * H,
    });
    expect(later).toMatchObject({ standing: 0, reverted: 0, recomputedRows: 0 });
    expect(await snapshot(m.machineId)).toEqual(before);
  });

  it('ends a finding at the step back, and the compute pass flags only the rows between', async () => {
    const back = S + 6 * H;
    const m = await mixedUp('mix-3', 13, S, back);
    await backfill(db.pool, { from: T0, to: UPTO, machineIds: [m.machineId] });
    const stats = await runGaugeAbsoluteOnce(db.pool, { nowMs: UPTO, machineIds: [m.machineId] });
    expect(stats).toMatchObject({ standing: 1, reverted: 1 });
    const f = await db.pool.query<{ status: string; ended_at: Date }>(
      `SELECT status, ended_at FROM instrument_findings WHERE machine_id = $1`,
      [m.machineId],
    );
    expect(f.rows.map((r) => [r.status, r.ended_at.getTime()])).toEqual([['reverted', back]]);
    expect(await flagged(m.machineId, IN)).toEqual({ n: 6 * 60, first: S, invalid: 6 * 60 });
  });

  it('raises an instrument alert on the inlet tag from the flagged rows', async () => {
    const m = await mixedUp('mix-4', 14, S, END);
    await backfill(db.pool, { from: T0, to: UPTO, machineIds: [m.machineId] });
    await runGaugeAbsoluteOnce(db.pool, { nowMs: UPTO, machineIds: [m.machineId] });
    await runAnalysisOnce(db.pool, { nowMs: UPTO, machineIds: [m.machineId] });
    await runAlertsOnce(db.pool, { nowMs: UPTO, machineIds: [m.machineId], maxCatchUpMs: 3 * DAY });
    const alerts = await db.pool.query<{ category: string; tag_id: number | null }>(
      `SELECT category, tag_id FROM alerts WHERE machine_id = $1 AND category = 'instrument'`,
      [m.machineId],
    );
    expect(alerts.rows.map((a) => a.tag_id)).toContain(m.tagIds.inletPressure);
  });

  it('flags an absolute pressure at or below zero point by point in the compute pass', async () => {
    const m = await mixedUp('neg-1', 15, END, END);
    // A gauge transmitter reading -1.2 barg: below zero absolute (invented).
    await db.pool.query(
      `UPDATE samples SET value = -1.2 - $2 WHERE tag_id = $1 AND time >= to_timestamp($3::float8 / 1000)
          AND time < to_timestamp($4::float8 / 1000)`,
      [m.tagIds.inletPressure, ATM_BAR, T0 + 10 * H, T0 + 10 * H + 5 * MIN],
    );
    await backfill(db.pool, { from: T0, to: T0 + DAY, machineIds: [m.machineId] });
    expect(await flagged(m.machineId, 'fault:pressure-not-positive:inletPressure')).toEqual({
      n: 5,
      first: T0 + 10 * H,
      invalid: 5,
    });
  });
});

describe('results are written by the compute pass alone', () => {
  it('has no UPDATE of results rows outside the compute and analysis columns (grep)', () => {
    // The analysis job writes its own columns (drift, baseline) and its queue marks; every other
    // column of a computed row, flags and valid included, is the compute pass's alone.
    const root = join(import.meta.dirname, '..');
    const offenders: string[] = [];
    const walk = (dir: string): void => {
      for (const e of readdirSync(dir, { withFileTypes: true })) {
        const p = join(dir, e.name);
        if (e.isDirectory()) walk(p);
        else if (p.endsWith('.ts') && !p.endsWith('.test.ts')) {
          const text = readFileSync(p, 'utf8');
          for (const m of text.matchAll(/UPDATE\s+results\b[^`]*?SET\s+([^`]*?)(WHERE|FROM|$)/gis))
            if (/\b(flags|valid)\s*=/.test(m[1] as string)) offenders.push(p);
        }
      }
    };
    walk(root);
    expect(offenders).toEqual([]);
  });
});
