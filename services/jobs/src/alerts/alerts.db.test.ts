import { CAUTION } from '@isentrope/monitor';
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { createTestDatabase, type TestDatabase } from '../../../../test/support/database.js';
import { runAnalysisOnce } from '../analysis/job.js';
import { runAlertsOnce } from './job.js';
import { rng, type SeedResult, seedBaseline, seedResults, seedTestMachine, seedTestSite } from './seed.js';
import { isoSeconds } from './times.js';

let db: TestDatabase;
let siteId: number;
const T0 = Date.UTC(2026, 1, 2); // invented data
const MIN = 60_000;
const H = 3_600_000;
const DAY = 86_400_000;
const BASE = 0.8;
const BANDS = { warning: 2, alarm: 4, onDelayS: 900, offDelayS: 900, deadband: 0.5 };

beforeAll(async () => {
  db = await createTestDatabase();
  siteId = await seedTestSite(db.pool, 'alert-works');
});
afterAll(async () => {
  await db?.drop();
});

/** One result a minute over [from, to) with drift(t) [%-points] against a constant baseline of 0.8. */
function series(
  from: number,
  to: number,
  drift: (t: number) => number,
  extra?: Partial<SeedResult>,
): SeedResult[] {
  const out: SeedResult[] = [];
  for (let t = from; t < to; t += MIN)
    out.push({ t, efficiency: BASE + drift(t) / 100, uEfficiency: 0.001, operatingPoint: 50, ...extra });
  return out;
}

async function machineWith(slug: string, opts: Parameters<typeof seedTestMachine>[3] = {}): Promise<number> {
  const m = await seedTestMachine(db.pool, siteId, slug, { bands: BANDS, ...opts });
  await seedBaseline(db.pool, m.id, [BASE], T0 - 10 * 86_400_000, T0 - 86_400_000);
  return m.id;
}

async function runBoth(id: number, nowMs: number): Promise<void> {
  await runAnalysisOnce(db.pool, { nowMs, machineIds: [id] });
  await runAlertsOnce(db.pool, { nowMs, machineIds: [id] });
}

interface EventRow {
  alert_id: number;
  time: Date;
  from_state: string | null;
  to_state: string;
  actor: string;
}
async function events(machineId: number): Promise<EventRow[]> {
  const r = await db.pool.query<EventRow>(
    `SELECT e.alert_id::int, e.time, e.from_state, e.to_state, e.actor FROM alert_events e JOIN alerts a ON a.id = e.alert_id
      WHERE a.machine_id = $1 ORDER BY e.time, e.id`,
    [machineId],
  );
  return r.rows;
}

// A step of -3.3 points at S lasting 3 h, then back to 0 (invented; chosen so that no window mean
// lands exactly on a level). Derivation of the expected times from the band rules (common practice,
// no source): the 1-hour mean is -3.3 k/60 with k = (e - S)/1 min; it is first below the warning
// level -2 at k = 37, so the on-delay of 15 min ends at S + 52 min. After the return R = S + 3 h the
// mean is -3.3 (60 - j)/60 with j = (e - R)/1 min, first above -2 + deadband 0.5 = -1.5 at j = 33;
// the off-delay of 15 min ends at R + 48 min.
const S = T0 + 2 * H;
const R = S + 3 * H;
const stepDrift = (t: number): number => (t >= S && t < R ? -3.3 : 0);

describe('drift alerts', () => {
  it('hold the on-delay and the off-delay, with evidence and the caution', async () => {
    const id = await machineWith('step-1');
    await seedResults(db.pool, id, series(T0, T0 + 8 * H, stepDrift));
    await runBoth(id, T0 + 8 * H + MIN);
    const ev = await events(id);
    expect(ev.map((e) => [e.from_state, e.to_state, e.actor])).toEqual([
      ['normal', 'active_unacknowledged', 'system'],
      ['active_unacknowledged', 'returned_unacknowledged', 'system'],
    ]);
    expect(ev[0]?.time.getTime()).toBe(S + 52 * MIN);
    expect(ev[1]?.time.getTime()).toBe(R + 48 * MIN);
    const a = await db.pool.query<{
      message: string;
      evidence: Record<string, unknown>;
      level: string;
      category: string;
      condition_since: Date;
    }>(`SELECT message, evidence, level, category, condition_since FROM alerts WHERE machine_id = $1`, [id]);
    expect(a.rows).toHaveLength(1);
    const row = a.rows[0]!;
    expect(row.category).toBe('drift');
    expect(row.level).toBe('warning');
    expect(row.message).toContain(CAUTION);
    expect(row.evidence.caution).toBe(CAUTION);
    expect(row.evidence.k).toBe(2);
    expect(row.evidence.baselineId).toEqual(expect.any(Number));
    // The judged hour holds 52 points of the step: mean -3.3 x 52/60 = -2.86 points (common practice, no source).
    expect(row.evidence.driftPts as number).toBeCloseTo(-2.86, 6);
    expect(row.evidence.link).toBe(
      `/machines/step-1?from=${encodeURIComponent(isoSeconds(S - 8 * MIN))}&to=${encodeURIComponent(isoSeconds(S + 52 * MIN))}`,
    );
    // Raised live: the condition dates from the start of the on-delay, the first hourly mean
    // beyond the warning level (S + 37 min, derivation above); no day before it holds data.
    expect(row.condition_since.getTime()).toBe(S + 37 * MIN);
    expect(row.evidence.conditionSince).toBe('2026-02-02T02:37:00Z');
    expect(row.evidence.raisedAt).toBe('2026-02-02T02:52:00Z');
    expect(row.evidence.conditionSinceBasis).toContain('on-delay');
    expect(row.message).toContain('condition since 2026-02-02T02:37:00Z, raised 2026-02-02T02:52:00Z');
    expect(row.evidence.coverage).toBe(1);
    const audit = await db.pool.query<{ n: number }>(
      `SELECT count(*)::int AS n FROM audit_log WHERE actor = 'system' AND action = 'alert.transition' AND entity_id = $1`,
      [String(ev[0]?.alert_id)],
    );
    expect(audit.rows[0]?.n).toBe(2);
  });

  it('gives the same events when the data arrive in pieces, ticking as it goes', async () => {
    const id = await machineWith('step-2');
    for (let from = T0; from < T0 + 8 * H; from += 30 * MIN) {
      await seedResults(db.pool, id, series(from, from + 30 * MIN, stepDrift));
      await runBoth(id, from + 31 * MIN);
    }
    const ev = await events(id);
    expect(ev.map((e) => [e.to_state, e.time.getTime()])).toEqual([
      ['active_unacknowledged', S + 52 * MIN],
      ['returned_unacknowledged', R + 48 * MIN],
    ]);
  });

  it('a noisy drift hovering at the warning edge changes state a bounded number of times', async () => {
    // Drift -2 + 0.3 sin(2 pi t / 3 h) + noise (sd 0.5 point) for 12 h (invented): the hourly mean
    // wanders about -2 +- 0.25, across the warning level many times.
    const r = rng(7);
    const drift = (t: number): number =>
      -2 + 0.3 * Math.sin((2 * Math.PI * (t - T0)) / (3 * H)) + 0.5 * r.normal();
    const rows = series(T0, T0 + 12 * H, () => 0).map((p) => ({ ...p, efficiency: BASE + drift(p.t) / 100 }));
    const banded = await machineWith('edge-banded');
    const bare = await machineWith('edge-bare', {
      bands: { warning: 2, alarm: 4, onDelayS: 0, offDelayS: 0, deadband: 0 },
    });
    await seedResults(db.pool, banded, rows);
    await seedResults(db.pool, bare, rows);
    await runBoth(banded, T0 + 12 * H + MIN);
    await runBoth(bare, T0 + 12 * H + MIN);
    const withBand = await events(banded);
    const without = await events(bare);
    // Deadband 0.5 and 15 min delays: raised once, never flapping (bound: common practice, no source).
    expect(withBand.length).toBeGreaterThanOrEqual(1);
    expect(withBand.length).toBeLessThanOrEqual(2);
    // The same data with no deadband and no delays flaps: shows the bound is the band's doing.
    expect(without.length).toBeGreaterThan(4);
  });

  it('an acknowledged alert returns to normal when the condition clears; shelving expires on time', async () => {
    const id = await machineWith('ack-shelve');
    await seedResults(db.pool, id, series(T0, S + 2 * H, stepDrift));
    await runBoth(id, S + 2 * H);
    const open = await db.pool.query<{ id: number; state: string }>(
      `SELECT id::int, state FROM alerts WHERE machine_id = $1 AND state <> 'normal'`,
      [id],
    );
    expect(open.rows[0]?.state).toBe('active_unacknowledged');
    const alertId = open.rows[0]!.id;
    // An operator shelves it (as the API writes it) until S + 2 h 30 min.
    const until = S + 2.5 * H;
    await db.pool.query(
      `UPDATE alerts SET state = 'shelved', shelved_until = $2, shelved_by = 'op (invented)' WHERE id = $1`,
      [alertId, new Date(until)],
    );
    await seedResults(db.pool, id, series(S + 2 * H, S + 2.5 * H, stepDrift));
    await runBoth(id, until - MIN);
    const still = await db.pool.query<{ state: string }>(`SELECT state FROM alerts WHERE id = $1`, [alertId]);
    expect(still.rows[0]?.state).toBe('shelved');
    await runBoth(id, until);
    const after = await db.pool.query<{ state: string; shelved_until: Date | null }>(
      `SELECT state, shelved_until FROM alerts WHERE id = $1`,
      [alertId],
    );
    // Condition still active at expiry: back to active, unacknowledged (ISA-18.2 shelving).
    expect(after.rows[0]).toEqual({ state: 'active_unacknowledged', shelved_until: null });
    const expiry = (await events(id)).at(-1);
    expect([expiry?.from_state, expiry?.to_state, expiry?.time.getTime()]).toEqual([
      'shelved',
      'active_unacknowledged',
      until,
    ]);
    // Acknowledged (as the API writes it); the condition then clears: straight to normal.
    await db.pool.query(
      `UPDATE alerts SET state = 'active_acknowledged', acknowledged_by = 'op' WHERE id = $1`,
      [alertId],
    );
    await seedResults(db.pool, id, series(S + 2.5 * H, R + 2 * H, stepDrift));
    await runBoth(id, R + 2 * H);
    const last = (await events(id)).at(-1);
    expect([last?.from_state, last?.to_state, last?.time.getTime()]).toEqual([
      'active_acknowledged',
      'normal',
      R + 48 * MIN,
    ]);
  });

  it('an alarm raised on history dates its condition from the first day of the unbroken crossing', async () => {
    // Drift -5 points from D + 3 h on (invented), results T0 .. T0 + 10 d, the alert job run once at
    // the end: it judges only the last 24 h (its default catch-up), finds the alarm already held
    // and raises it then. Day means: D holds 21 h at -5, -4.375, beyond the alarm level -4; the
    // day before is at 0 (arithmetic on the invented series).
    const D = T0 + 3 * DAY;
    const id = await machineWith('since-1');
    await seedResults(
      db.pool,
      id,
      series(T0, T0 + 10 * DAY, (t) => (t >= D + 3 * H ? -5 : 0)),
    );
    await runBoth(id, T0 + 10 * DAY + MIN);
    const a = await db.pool.query<{
      level: string;
      raised_at: Date;
      condition_since: Date;
      message: string;
      evidence: Record<string, unknown>;
    }>(`SELECT level, raised_at, condition_since, message, evidence FROM alerts WHERE machine_id = $1`, [id]);
    expect(a.rows).toHaveLength(1);
    const row = a.rows[0]!;
    expect(row.level).toBe('alarm');
    // The band starts 24 h before the end; its first hour is beyond the alarm level at once, so
    // the 15 min on-delay ends at T0 + 9 d + 16 min (first window end T0 + 9 d + 1 min).
    const raised = T0 + 9 * DAY + 16 * MIN;
    expect(row.raised_at.getTime()).toBe(raised);
    expect(row.condition_since.getTime()).toBe(D);
    expect(row.evidence.conditionSince).toBe('2026-02-05T00:00:00Z');
    expect(row.evidence.conditionSinceBasis).toContain('daily mean');
    expect(row.message).toContain(`condition since 2026-02-05T00:00:00Z, raised ${isoSeconds(raised)}`);
  });

  it('a crossing that went back inside the band and out again counts from the last crossing', async () => {
    // Beyond on days D and D + 1, back at 0 on D + 2, beyond again from D + 3 d + 3 h; day D + 5
    // holds no results (a gap: neither extends nor breaks the run). Invented.
    const D = T0 + 2 * DAY;
    const drift = (t: number): number =>
      (t >= D + 3 * H && t < D + 2 * DAY) || t >= D + 3 * DAY + 3 * H ? -5 : 0;
    const rows = series(T0, T0 + 10 * DAY, drift).filter((p) => p.t < D + 5 * DAY || p.t >= D + 6 * DAY);
    const id = await machineWith('since-2');
    await seedResults(db.pool, id, rows);
    await runBoth(id, T0 + 10 * DAY + MIN);
    const a = await db.pool.query<{ condition_since: Date; evidence: Record<string, unknown> }>(
      `SELECT condition_since, evidence FROM alerts WHERE machine_id = $1`,
      [id],
    );
    expect(a.rows).toHaveLength(1);
    expect(a.rows[0]?.condition_since.getTime()).toBe(D + 3 * DAY);
    expect(a.rows[0]?.evidence.conditionSince).toBe(isoSeconds(D + 3 * DAY));
  });

  it('an out-of-service machine raises nothing', async () => {
    const id = await machineWith('oos', { outOfService: true });
    await seedResults(db.pool, id, series(T0, T0 + 8 * H, stepDrift));
    await runBoth(id, T0 + 8 * H + MIN);
    expect(await events(id)).toEqual([]);
    const n = await db.pool.query<{ n: number }>(
      `SELECT count(*)::int AS n FROM alerts WHERE machine_id = $1`,
      [id],
    );
    expect(n.rows[0]?.n).toBe(0);
  });
});

describe('instrument alerts', () => {
  it('a stuck transmitter raises an instrument alert on its tag and no drift alert', async () => {
    const m = await seedTestMachine(db.pool, siteId, 'stuck', {
      bands: BANDS,
      roles: ['inletPressure', 'outletTemperature'],
    });
    await seedBaseline(db.pool, m.id, [BASE], T0 - 10 * 86_400_000, T0 - 86_400_000);
    // Outlet temperature frozen 2 h (invented): the compute job flags the points and marks them not
    // valid; the efficiency they would give is far off (an apparent -10 points).
    const F0 = T0 + 2 * H;
    const F1 = F0 + 2 * H;
    const rows = series(T0, T0 + 6 * H, () => 0).map((p) =>
      p.t >= F0 && p.t < F1
        ? { ...p, efficiency: BASE - 0.1, valid: false, flags: ['fault:stuck:outletTemperature'] }
        : p,
    );
    await seedResults(db.pool, m.id, rows);
    await runBoth(m.id, T0 + 6 * H + MIN);
    const alerts = await db.pool.query<{
      category: string;
      tag_id: number | null;
      state: string;
      raised_at: Date;
      condition_since: Date;
      message: string;
      evidence: Record<string, unknown>;
    }>(
      `SELECT category, tag_id, state, raised_at, condition_since, message, evidence FROM alerts WHERE machine_id = $1`,
      [m.id],
    );
    expect(alerts.rows).toHaveLength(1);
    const a = alerts.rows[0]!;
    expect(a.category).toBe('instrument');
    expect(a.tag_id).toBe(m.tags.outletTemperature);
    // On-delay 15 min from the first flagged point; off-delay 15 min from the first clean one.
    expect(a.raised_at.getTime()).toBe(F0 + 15 * MIN);
    expect(a.state).toBe('returned_unacknowledged');
    // The condition dates from the first flagged result.
    expect(a.condition_since.getTime()).toBe(F0);
    expect(a.message).toContain(`condition since ${isoSeconds(F0)}, raised ${isoSeconds(F0 + 15 * MIN)}`);
    expect(a.message).toContain(CAUTION);
    expect(a.evidence.caution).toBe(CAUTION);
    const ev = await events(m.id);
    expect(ev.map((e) => [e.to_state, e.time.getTime()])).toEqual([
      ['active_unacknowledged', F0 + 15 * MIN],
      ['returned_unacknowledged', F1 + 15 * MIN],
    ]);
  });

  it('a fault held before the run dates from its instrument finding, or from the first result of its flagged run', async () => {
    const m = await seedTestMachine(db.pool, siteId, 'since-instr', {
      bands: BANDS,
      roles: ['inletPressure', 'outletTemperature'],
    });
    await seedBaseline(db.pool, m.id, [BASE], T0 - 10 * 86_400_000, T0 - 86_400_000);
    // Invented: the inlet pressure reads one atmosphere high from G on (a gauge/absolute finding
    // as services/jobs/src/instrument writes it, its results flagged and not valid); the outlet
    // thermometer sticks from U on. Both still hold at the end; the alert job runs once, judging
    // the last 24 h.
    const G = T0 + DAY + 7 * H + 13 * MIN;
    const U = T0 + 2 * DAY + 5 * H;
    const END = T0 + 4 * DAY;
    const rows = series(T0, END, () => 0).map((p) => {
      const flags = [
        ...(p.t >= G ? ['fault:gauge-absolute:inletPressure'] : []),
        ...(p.t >= U ? ['fault:stuck:outletTemperature'] : []),
      ];
      return flags.length === 0 ? p : { ...p, valid: false, flags };
    });
    await seedResults(db.pool, m.id, rows);
    const f = await db.pool.query<{ id: number }>(
      `INSERT INTO instrument_findings (machine_id, tag_id, role, kind, at, status, direction, likely_cause, shift_pa,
                                        shift_ambients, level_before_pa, level_after_pa, ambient_pa, cross_check)
       VALUES ($1, $2, 'inletPressure', 'gauge-absolute', $3, 'standing', 'reads-high',
               'absolute transmitter on a gauge tag', 101325, 1, 101325, 202650, 101325, 'mix-up') RETURNING id::int`,
      [m.id, m.tags.inletPressure, new Date(G)],
    );
    await runBoth(m.id, END + MIN);
    const alerts = await db.pool.query<{
      tag_id: number;
      raised_at: Date;
      condition_since: Date;
      message: string;
      evidence: Record<string, unknown>;
    }>(
      `SELECT tag_id, raised_at, condition_since, message, evidence FROM alerts
        WHERE machine_id = $1 AND category = 'instrument' ORDER BY tag_id`,
      [m.id],
    );
    expect(alerts.rows.map((a) => a.tag_id)).toEqual([m.tags.inletPressure, m.tags.outletTemperature]);
    const [inlet, outlet] = alerts.rows;
    // Both raised 15 min (on-delay) into the judged 24 h.
    const raised = END - DAY + 15 * MIN;
    expect(inlet?.raised_at.getTime()).toBe(raised);
    expect(outlet?.raised_at.getTime()).toBe(raised);
    expect(inlet?.condition_since.getTime()).toBe(G);
    expect(inlet?.evidence.conditionSince).toBe('2026-02-03T07:13:00Z');
    expect(inlet?.evidence.conditionSinceBasis).toContain(`instrument finding ${f.rows[0]?.id}`);
    expect(inlet?.message).toContain(`condition since 2026-02-03T07:13:00Z, raised ${isoSeconds(raised)}`);
    expect(outlet?.condition_since.getTime()).toBe(U);
    expect(outlet?.evidence.conditionSince).toBe(isoSeconds(U));
    expect(outlet?.evidence.conditionSinceBasis).toContain('unbroken run');
  });
});
