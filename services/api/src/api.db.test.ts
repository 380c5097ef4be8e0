import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { createTestDatabase, type TestDatabase } from '../../../test/support/database.js';
import type { ApiApp } from './app.js';
import { buildTestApp } from './test-support/app.js';
import {
  analyseStored,
  createRoleTokens,
  insertAlert,
  insertComputedResult,
  insertResults,
  inventedCompressorResult,
  inventedTurbineResult,
  type SeededPlant,
  seedPlant,
  setBands,
  setBaseline,
} from './test-support/seed.js';

const HOUR = 3_600_000;

describe('API with roles, problems, pagination, ETags and audit', () => {
  let db: TestDatabase;
  let app: ApiApp;
  let plant: SeededPlant;
  let tokens: Record<'viewer' | 'engineer' | 'admin', string> = { viewer: '', engineer: '', admin: '' };
  const auth = (role: keyof typeof tokens) => ({ authorization: `Bearer ${tokens[role]}` });
  const t0 = Date.UTC(2026, 2, 1);

  beforeAll(async () => {
    db = await createTestDatabase();
    plant = await seedPlant(db.pool);
    tokens = await createRoleTokens(db.pool);
    await setBands(db.pool, plant.compressorId, 2, 4);
    // Baseline eta = 0.80 + 0.05 x (x = load fraction), invented.
    await setBaseline(db.pool, plant.compressorId, [0.8, 0.05], 0.4, 1);
    // 48 hourly results: x = 0.8 -> baseline 0.84; efficiency 0.82 -> drift -2 points (invented).
    await insertResults(
      db.pool,
      plant.compressorId,
      Array.from({ length: 48 }, (_, i) => ({
        t: t0 + i * HOUR,
        efficiency: 0.82,
        operatingPoint: 0.8,
        power: 1e6,
        valid: i !== 5,
      })),
    );
    await analyseStored(db.pool, t0 + 48 * HOUR, HOUR);
    // The drift band's severity as the alert job stores it (the API shows it, it does not judge it).
    await db.pool.query(`UPDATE machine_status SET band_severity = 'warning' WHERE machine_id = $1`, [
      plant.compressorId,
    ]);
    app = await buildTestApp(db.pool, { now: () => t0 + 48 * HOUR });
  });
  afterAll(async () => {
    await app?.close();
    await db?.drop();
  });

  it('creates the first admin from the configured password on start, once', async () => {
    // Users existed before start here, so no admin was added; check the rule on an empty table.
    const { rows } = await db.pool.query<{ n: string }>(
      `SELECT count(*) AS n FROM users WHERE username = 'admin'`,
    );
    expect(Number(rows[0]!.n)).toBe(0);
  });

  it('refuses anonymous reads with a 401 problem (no anonymous role configured)', async () => {
    const r = await app.inject({ method: 'GET', url: '/api/fleet' });
    expect(r.statusCode).toBe(401);
    expect(r.headers['content-type']).toMatch(/^application\/problem\+json/);
    const p = r.json<{ code: string; status: number; type: string; instance: string; title: string }>();
    expect(p).toMatchObject({ code: 'API_UNAUTHENTICATED', status: 401, instance: '/api/fleet' });
    expect(p.type).toContain('API_UNAUTHENTICATED');
  });

  it('keeps health public', async () => {
    const r = await app.inject({ method: 'GET', url: '/api/health' });
    expect(r.statusCode).toBe(200);
    expect(r.json<{ status: string }>().status).toBe('ok');
    expect((await app.inject({ method: 'GET', url: '/api/ready' })).statusCode).toBe(200);
  });

  it('rejects an unknown token', async () => {
    const r = await app.inject({
      method: 'GET',
      url: '/api/fleet',
      headers: { authorization: 'Bearer isk_nope' },
    });
    expect(r.statusCode).toBe(401);
    expect(r.json<{ code: string }>().code).toBe('API_BAD_TOKEN');
  });

  it('fleet: current efficiency, drift against the baseline and the band', async () => {
    const r = await app.inject({ method: 'GET', url: '/api/fleet', headers: auth('viewer') });
    expect(r.statusCode).toBe(200);
    const items = r.json<{
      items: {
        id: number;
        band: string;
        state: { key: string; label: string };
        current: { efficiency: number; driftPts: number; baseline: number; n: number } | null;
        health: { results: number; valid: number };
      }[];
    }>().items;
    const ac = items.find((m) => m.id === plant.compressorId)!;
    // Seeded: 0.82 against 0.80 + 0.05 x 0.8 = 0.84 -> -2.000 points; bands 2/4 -> warning (invented data, hand arithmetic).
    expect(ac.current?.efficiency).toBeCloseTo(0.82, 12);
    expect(ac.current?.baseline).toBeCloseTo(0.84, 12);
    expect(ac.current?.driftPts).toBeCloseTo(-2, 9);
    expect(ac.band).toBe('warning');
    expect(ac.state).toMatchObject({ key: 'warning', label: 'warning' });
    // The hour before the newest valid result holds that result only (results are hourly, window (t-1h, t]).
    expect(ac.current?.n).toBe(1);
    expect(ac.health.results).toBe(23); // results at t0+25h..t0+47h lie in (now - 24 h, now]
    const st = items.find((m) => m.id === plant.turbineId)!;
    expect(st.current).toBeNull();
    expect(st.band).toBe('unknown');
    expect(st.state).toMatchObject({ key: 'no-data', label: 'no valid result' });
  });

  it('fleet: open alerts counted apart for drift and instruments; a returned-to-normal one is not open', async () => {
    const ids = [
      await insertAlert(db.pool, plant.turbineId, 'active_unacknowledged', 'alarm', 'drift'),
      await insertAlert(db.pool, plant.turbineId, 'shelved', 'warning', 'instrument'),
    ];
    // One open alert per machine, category and tag (migrations/0003): the second instrument alert is on a tag.
    await db.pool.query('UPDATE alerts SET tag_id = $2 WHERE id = $1', [ids[1], plant.tagIds[0]]);
    ids.push(
      await insertAlert(db.pool, plant.turbineId, 'active_acknowledged', 'warning', 'instrument'),
      await insertAlert(db.pool, plant.turbineId, 'normal', 'warning', 'drift'),
    );
    try {
      const r = await app.inject({ method: 'GET', url: '/api/fleet', headers: auth('viewer') });
      const st = r
        .json<{ items: { id: number; openAlerts: number; openAlertsByCategory: unknown }[] }>()
        .items.find((m) => m.id === plant.turbineId)!;
      expect(st.openAlerts).toBe(3);
      expect(st.openAlertsByCategory).toEqual({ drift: 1, instrument: 2 });
    } finally {
      await db.pool.query('DELETE FROM alerts WHERE id = ANY($1)', [ids]);
    }
  });

  it('trend: downsampled buckets with baseline and drift, ETag and 304', async () => {
    const url = `/api/machines/${plant.compressorId}/trend?from=${new Date(t0).toISOString()}&to=${new Date(t0 + 48 * HOUR).toISOString()}&buckets=4`;
    const r = await app.inject({ method: 'GET', url, headers: auth('viewer') });
    expect(r.statusCode).toBe(200);
    const body = r.json<{
      bucketMs: number;
      buckets: { n: number; nValid: number; efficiencyMean: number; driftPts: number; baseline: number }[];
    }>();
    expect(body.bucketMs).toBe(12 * HOUR);
    expect(body.buckets.map((b) => b.n)).toEqual([12, 12, 12, 12]);
    expect(body.buckets[0]!.nValid).toBe(11); // result 5 is invalid
    expect(body.buckets[0]!.driftPts).toBeCloseTo(-2, 9);
    expect(body.buckets[0]!.baseline).toBeCloseTo(0.84, 12);
    const etag = r.headers.etag as string;
    expect(etag).toMatch(/^".+"$/);
    const again = await app.inject({
      method: 'GET',
      url,
      headers: { ...auth('viewer'), 'if-none-match': etag },
    });
    expect(again.statusCode).toBe(304);
    expect(again.body).toBe('');
  });

  it("trend over a long range: hourly aggregates merge to the live query's figures", async () => {
    // 40 days of 10-minute results with varying efficiency and load (invented), queried both ways.
    const m = (
      await db.pool.query<{ id: number }>(
        `INSERT INTO machines (site_id, slug, name, kind, fluid, spec) VALUES ($1, 'ac9', 'AC9 (invented)', 'compressor', '"air"', '{}') RETURNING id`,
        [plant.siteId],
      )
    ).rows[0]!.id;
    await setBaseline(db.pool, m, [0.7, 0.1, 0.05], 0.4, 1);
    const start = Date.UTC(2025, 10, 20);
    await insertResults(
      db.pool,
      m,
      Array.from({ length: 40 * 144 }, (_, i) => ({
        t: start + i * 600_000,
        efficiency: 0.8 + 0.01 * Math.sin(i / 17),
        operatingPoint: 0.6 + 0.3 * Math.cos(i / 29),
        power: 1e6 + 1e4 * (i % 7),
        valid: i % 13 !== 0,
      })),
    );
    await analyseStored(db.pool, start + 40 * 86_400_000, 600_000);
    const from = new Date(start).toISOString();
    const to = new Date(start + 40 * 86_400_000).toISOString();
    const long = await app.inject({
      method: 'GET',
      url: `/api/machines/${m}/trend?from=${from}&to=${to}&buckets=80`,
      headers: auth('viewer'),
    });
    const body = long.json<{
      bucketMs: number;
      buckets: {
        t: number;
        n: number;
        efficiencyMean: number;
        driftPts: number;
        powerMax: number;
        uEfficiency: number;
      }[];
    }>();
    expect(body.bucketMs).toBe(12 * HOUR);
    const { resultTrend } = await import('./queries/results.js');
    const live = await resultTrend(db.pool, m, start, start + 40 * 86_400_000, 80);
    expect(body.buckets.length).toBe(live.buckets.length);
    body.buckets.forEach((b, i) => {
      const l = live.buckets[i]!;
      expect(b.t).toBe(l.t);
      expect(b.n).toBe(l.n);
      // The answer is rounded to 7 decimals (efficiency) and 5 (drift points) for the wire.
      expect(b.efficiencyMean).toBeCloseTo(l.efficiencyMean!, 6);
      expect(b.driftPts).toBeCloseTo(l.driftPts!, 4);
      expect(b.powerMax).toBe(Math.round(l.powerMax!));
      expect(b.uEfficiency).toBeCloseTo(l.uEfficiency!, 6);
    });
  });

  it('results: keyset pagination with a next link that walks all rows once', async () => {
    const seen = new Set<string>();
    let url: string | null =
      `/api/machines/${plant.compressorId}/results?from=${new Date(t0).toISOString()}&to=${new Date(t0 + 48 * HOUR).toISOString()}&limit=20`;
    let pages = 0;
    while (url !== null) {
      const r: { statusCode: number; json: () => unknown } = await app.inject({
        method: 'GET',
        url,
        headers: auth('viewer'),
      });
      expect(r.statusCode).toBe(200);
      const body = r.json() as { items: { time: string }[]; next: string | null };
      for (const it of body.items) seen.add(it.time);
      url = body.next;
      pages++;
    }
    expect(pages).toBe(3);
    expect(seen.size).toBe(48);
    const bad = await app.inject({
      method: 'GET',
      url: `/api/machines/${plant.compressorId}/results?cursor=@@`,
      headers: auth('viewer'),
    });
    expect(bad.json<{ code: string }>().code).toBe('API_BAD_CURSOR');
  });

  it('samples: raw pages and a downsampled tag trend with min, mean and max per bucket', async () => {
    const tag = plant.tagIds[0]!;
    const ts = Array.from({ length: 120 }, (_, i) => t0 + i * 60_000);
    const { ensurePartitions } = await import('@isentrope/store');
    await ensurePartitions(db.pool, 'samples', ts[0]!, ts.at(-1)!);
    // Values 0..119 (invented): bucket k of 30 minutes holds 30k..30k+29, mean 30k + 14.5.
    await db.pool.query(
      `INSERT INTO samples (tag_id, time, value) SELECT $1, to_timestamp(t / 1000.0), v FROM unnest($2::float8[], $3::float8[]) AS x(t, v)`,
      [tag, ts, ts.map((_, i) => i)],
    );
    const range = `from=${new Date(t0).toISOString()}&to=${new Date(t0 + 2 * HOUR).toISOString()}`;
    const tr = await app.inject({
      method: 'GET',
      url: `/api/tags/${tag}/trend?${range}&buckets=4`,
      headers: auth('viewer'),
    });
    const body = tr.json<{
      source: string;
      buckets: { min: number; max: number; mean: number; count: number }[];
    }>();
    expect(body.source).toBe('samples');
    expect(body.buckets).toEqual(
      [0, 1, 2, 3].map((k) => ({
        t: t0 + k * 30 * 60_000,
        min: 30 * k,
        max: 30 * k + 29,
        mean: 30 * k + 14.5,
        count: 30,
      })),
    );
    const page1 = await app.inject({
      method: 'GET',
      url: `/api/tags/${tag}/samples?${range}&limit=100`,
      headers: auth('viewer'),
    });
    const p1 = page1.json<{ items: { value: number }[]; next: string }>();
    expect(p1.items.length).toBe(100);
    const page2 = await app.inject({ method: 'GET', url: p1.next, headers: auth('viewer') });
    expect(page2.json<{ items: { value: number }[]; next: string | null }>()).toMatchObject({ next: null });
    expect(page2.json<{ items: { value: number }[] }>().items.map((x) => x.value)).toEqual(
      Array.from({ length: 20 }, (_, i) => 100 + i),
    );
  });

  it('drift: daily drift and the Theil-Sen rate with a forecast to the alarm band', async () => {
    // A fresh compressor: 30 days, drift falling 0.1 point a day from -0.5 (invented);
    // Theil-Sen of collinear points is their slope (Sen 1968): -0.1 x 30.44 = -3.044 points/month.
    const m = (
      await db.pool.query<{ id: number }>(
        `INSERT INTO machines (site_id, slug, name, kind, fluid, spec) VALUES ($1, 'ac7', 'AC7 (invented)', 'compressor', '"air"', '{}') RETURNING id`,
        [plant.siteId],
      )
    ).rows[0]!.id;
    await setBaseline(db.pool, m, [0.84], 0, 2);
    await setBands(db.pool, m, 2, 4);
    const d0 = Date.UTC(2026, 0, 1);
    await insertResults(
      db.pool,
      m,
      Array.from({ length: 30 }, (_, i) => ({
        t: d0 + i * 86_400_000 + HOUR,
        efficiency: 0.84 - 0.005 - 0.001 * i,
        operatingPoint: 1,
      })),
    );
    await analyseStored(db.pool, d0 + 30 * 86_400_000, HOUR);
    const r = await app.inject({
      method: 'GET',
      url: `/api/machines/${m}/drift?from=${new Date(d0).toISOString()}&to=${new Date(d0 + 30 * 86_400_000).toISOString()}`,
      headers: auth('viewer'),
    });
    const body = r.json<{
      days: unknown[];
      ratePtsPerMonth: number;
      alarmPts: number;
      forecast: { status: string; at: string };
    }>();
    expect(body.days).toHaveLength(30);
    expect(body.alarmPts).toBe(-4);
    expect(body.ratePtsPerMonth).toBeCloseTo(-3.044, 6);
    expect(body.forecast.status).toBe('forecast');
    // Last day's drift -3.4 at day 29 (mid-day); -4 is reached 6 days later.
    expect(Date.parse(body.forecast.at)).toBeCloseTo(d0 + 29.5 * 86_400_000 + 6 * 86_400_000, -4);
  });

  it('validation errors list the field', async () => {
    const r = await app.inject({ method: 'GET', url: '/api/machines/abc', headers: auth('viewer') });
    expect(r.statusCode).toBe(400);
    const p = r.json<{ code: string; errors: { path: string }[] }>();
    expect(p.code).toBe('API_VALIDATION');
    expect(p.errors[0]!.path).toContain('id');
    const nf = await app.inject({ method: 'GET', url: '/api/machines/999999', headers: auth('viewer') });
    expect(nf.statusCode).toBe(404);
    expect(nf.json<{ code: string }>().code).toBe('API_NOT_FOUND');
  });

  it('alerts: a viewer may list but not acknowledge; an engineer acknowledges, shelves, unshelves; all audited', async () => {
    const id = await insertAlert(db.pool, plant.compressorId, 'active_unacknowledged');
    const list = await app.inject({ method: 'GET', url: '/api/alerts', headers: auth('viewer') });
    expect(list.json<{ items: { id: number }[] }>().items.map((a) => a.id)).toContain(id);

    const denied = await app.inject({
      method: 'POST',
      url: `/api/alerts/${id}/acknowledge`,
      headers: auth('viewer'),
      payload: {},
    });
    expect(denied.statusCode).toBe(403);
    expect(denied.json<{ code: string }>().code).toBe('API_FORBIDDEN');

    const ack = await app.inject({
      method: 'POST',
      url: `/api/alerts/${id}/acknowledge`,
      headers: auth('engineer'),
      payload: { note: 'seen' },
    });
    expect(ack.statusCode).toBe(200);
    expect(ack.json<{ state: string; acknowledgedBy: string }>()).toMatchObject({
      state: 'active_acknowledged',
      acknowledgedBy: 'engineer1',
    });

    const again = await app.inject({
      method: 'POST',
      url: `/api/alerts/${id}/acknowledge`,
      headers: auth('engineer'),
      payload: {},
    });
    expect(again.statusCode).toBe(409);
    expect(again.json<{ code: string; detail: string }>().detail).toContain('ALERT_NOTHING_TO_ACKNOWLEDGE');

    const shelve = await app.inject({
      method: 'POST',
      url: `/api/alerts/${id}/shelve`,
      headers: auth('engineer'),
      payload: { hours: 8 },
    });
    expect(shelve.statusCode).toBe(200);
    expect(shelve.json<{ state: string; shelvedUntil: string }>()).toMatchObject({
      state: 'shelved',
      shelvedUntil: new Date(t0 + 56 * HOUR).toISOString(),
    });
    const unshelve = await app.inject({
      method: 'POST',
      url: `/api/alerts/${id}/unshelve`,
      headers: auth('engineer'),
      payload: {},
    });
    // The condition is still active, so unshelving annunciates again (ISA-18.2 via stepAlert).
    expect(unshelve.json<{ state: string }>().state).toBe('active_unacknowledged');

    const detail = await app.inject({ method: 'GET', url: `/api/alerts/${id}`, headers: auth('viewer') });
    expect(
      detail.json<{ events: { toState: string; actor: string }[] }>().events.map((e) => e.toState),
    ).toEqual(['active_acknowledged', 'shelved', 'active_unacknowledged']);
    const audit = await db.pool.query<{
      action: string;
      actor: string;
      before: { state: string };
      after: { state: string };
    }>(
      `SELECT action, actor, before, after FROM audit_log WHERE entity = 'alert' AND entity_id = $1 ORDER BY id`,
      [String(id)],
    );
    expect(audit.rows.map((a) => a.action)).toEqual(['alert.acknowledge', 'alert.shelve', 'alert.unshelve']);
    expect(audit.rows[0]!.before.state).toBe('active_unacknowledged');
    expect(audit.rows[0]!.after.state).toBe('active_acknowledged');
    expect(audit.rows[0]!.actor).toContain('engineer1');
  });

  it('bands: engineer may set, viewer may not, admin may; the change is audited with before and after', async () => {
    const body = {
      warning: 1.5,
      alarm: 3,
      onDelayS: 600,
      offDelayS: 600,
      deadband: 0.2,
      minCoverage: 0.6,
      severity: 'medium',
      requireBeyondUncertainty: true,
    };
    const url = `/api/machines/${plant.turbineId}/bands`;
    expect(
      (await app.inject({ method: 'PUT', url, headers: auth('viewer'), payload: body })).statusCode,
    ).toBe(403);
    const ok = await app.inject({ method: 'PUT', url, headers: auth('engineer'), payload: body });
    expect(ok.statusCode).toBe(200);
    const bad = await app.inject({
      method: 'PUT',
      url,
      headers: auth('engineer'),
      payload: { ...body, alarm: 1 },
    });
    expect(bad.statusCode).toBe(400);
    const audit = await db.pool.query<{ before: unknown; after: { alarm: number } }>(
      `SELECT before, after FROM audit_log WHERE action = 'bands.set' AND entity_id = $1`,
      [String(plant.turbineId)],
    );
    expect(audit.rows).toHaveLength(1);
    expect(audit.rows[0]!.before).toBeNull();
    expect(audit.rows[0]!.after.alarm).toBe(3);
  });

  it('baseline fit: engineer fits on a period; the polynomial recovers a known line', async () => {
    // Points exactly on eta = 0.70 + 0.10 x: least squares returns the line itself (invented data).
    const tb = Date.UTC(2026, 0, 10);
    await insertResults(
      db.pool,
      plant.turbineId,
      Array.from({ length: 30 }, (_, i) => {
        const x = 0.5 + (i % 10) * 0.05;
        return { t: tb + i * HOUR, efficiency: 0.7 + 0.1 * x, operatingPoint: x };
      }),
    );
    const payload = {
      from: new Date(tb).toISOString(),
      to: new Date(tb + 30 * HOUR).toISOString(),
      degree: 1,
    };
    const url = `/api/machines/${plant.turbineId}/baselines`;
    expect((await app.inject({ method: 'POST', url, headers: auth('viewer'), payload })).statusCode).toBe(
      403,
    );
    const r = await app.inject({ method: 'POST', url, headers: auth('engineer'), payload });
    expect(r.statusCode).toBe(201);
    const b = r.json<{ coefficients: number[]; n: number; active: boolean }>();
    expect(b.n).toBe(30);
    expect(b.coefficients[0]).toBeCloseTo(0.7, 9);
    expect(b.coefficients[1]).toBeCloseTo(0.1, 9);
    const empty = await app.inject({
      method: 'POST',
      url,
      headers: auth('engineer'),
      payload: { from: '2020-01-01T00:00:00Z', to: '2020-02-01T00:00:00Z', degree: 2 },
    });
    expect(empty.statusCode).toBe(422);
    expect(empty.json<{ code: string }>().code).toBe('API_FIT_FAILED');
  });

  it('tokens and users: admin only; a created token works once shown and is stored hashed', async () => {
    expect(
      (await app.inject({ method: 'GET', url: '/api/tokens', headers: auth('engineer') })).statusCode,
    ).toBe(403);
    const c = await app.inject({
      method: 'POST',
      url: '/api/tokens',
      headers: auth('admin'),
      payload: { name: 'historian bridge', role: 'viewer' },
    });
    expect(c.statusCode).toBe(201);
    const secret = c.json<{ token: string }>().token;
    expect(secret).toMatch(/^isk_/);
    const stored = await db.pool.query<{ token_hash: string }>(
      `SELECT token_hash FROM api_tokens WHERE name = 'historian bridge'`,
    );
    expect(stored.rows[0]!.token_hash).toMatch(/^[0-9a-f]{64}$/);
    expect(stored.rows[0]!.token_hash).not.toContain(secret);
    const me = await app.inject({
      method: 'GET',
      url: '/api/auth/me',
      headers: { authorization: `Bearer ${secret}` },
    });
    expect(me.json<{ role: string; username: string }>()).toMatchObject({
      role: 'viewer',
      username: 'admin1',
    });
    // The role-limited admin token may not act as admin.
    expect(
      (
        await app.inject({
          method: 'GET',
          url: '/api/tokens',
          headers: { authorization: `Bearer ${secret}` },
        })
      ).statusCode,
    ).toBe(403);
    const u = await app.inject({
      method: 'POST',
      url: '/api/users',
      headers: auth('admin'),
      payload: { username: 'planner', password: 'long-enough-pw', role: 'viewer' },
    });
    expect(u.statusCode).toBe(201);
    const dup = await app.inject({
      method: 'POST',
      url: '/api/users',
      headers: auth('admin'),
      payload: { username: 'planner', password: 'long-enough-pw', role: 'viewer' },
    });
    expect(dup.json<{ code: string }>().code).toBe('API_CONFLICT');
    // The same least length as a password change (12 characters).
    const short = await app.inject({
      method: 'POST',
      url: '/api/users',
      headers: auth('admin'),
      payload: { username: 'short-pw', password: 'eleven-char', role: 'viewer' },
    });
    expect(short.statusCode).toBe(400);
    expect(
      (
        await app.inject({
          method: 'POST',
          url: '/api/users',
          headers: auth('engineer'),
          payload: { username: 'x2', password: 'long-enough-pw', role: 'admin' },
        })
      ).statusCode,
    ).toBe(403);
    const patch = await app.inject({
      method: 'PATCH',
      url: `/api/machines/${plant.turbineId}`,
      headers: auth('engineer'),
      payload: { outOfService: true },
    });
    expect(patch.statusCode).toBe(403);
  });

  it('login sets an httpOnly SameSite=Strict session cookie that authenticates; logout ends it', async () => {
    const wrong = await app.inject({
      method: 'POST',
      url: '/api/auth/login',
      payload: { username: 'engineer1', password: 'nope' },
    });
    expect(wrong.statusCode).toBe(401);
    expect(wrong.json<{ code: string }>().code).toBe('API_BAD_CREDENTIALS');
    const r = await app.inject({
      method: 'POST',
      url: '/api/auth/login',
      payload: { username: 'engineer1', password: 'engineer-password-1' },
    });
    expect(r.statusCode).toBe(200);
    const setCookie = String(r.headers['set-cookie']);
    expect(setCookie).toMatch(/isentrope_session=/);
    expect(setCookie).toMatch(/HttpOnly/i);
    expect(setCookie).toMatch(/SameSite=Strict/i);
    const cookie = setCookie.split(';')[0]!;
    const value = cookie.split('=')[1]!;
    const stored = await db.pool.query(`SELECT 1 FROM api_tokens WHERE token_hash = $1`, [value]);
    expect(stored.rowCount).toBe(0); // only the hash is stored
    const me = await app.inject({ method: 'GET', url: '/api/auth/me', headers: { cookie } });
    expect(me.json<{ username: string; role: string; kind: string }>()).toEqual({
      kind: 'user',
      username: 'engineer1',
      role: 'engineer',
    });
    await app.inject({ method: 'POST', url: '/api/auth/logout', headers: { cookie } });
    expect((await app.inject({ method: 'GET', url: '/api/fleet', headers: { cookie } })).statusCode).toBe(
      401,
    );
  });

  it('refuses non-JSON bodies (415) and oversized bodies (413)', async () => {
    const form = await app.inject({
      method: 'POST',
      url: '/api/auth/login',
      headers: { 'content-type': 'text/plain' },
      payload: 'username=a&password=b',
    });
    expect(form.statusCode).toBe(415);
    expect(form.json<{ code: string }>().code).toBe('API_UNSUPPORTED_MEDIA');
    const big = await app.inject({
      method: 'POST',
      url: '/api/auth/login',
      payload: { username: 'a', password: 'x'.repeat(1_100_000) },
    });
    expect(big.statusCode).toBe(413);
    expect(big.json<{ code: string }>().code).toBe('API_PAYLOAD_TOO_LARGE');
  });

  it('security headers: CSP allowing our own scripts only, no sniffing', async () => {
    const r = await app.inject({ method: 'GET', url: '/api/health' });
    expect(String(r.headers['content-security-policy'])).toContain("script-src 'self'");
    expect(r.headers['x-content-type-options']).toBe('nosniff');
  });

  it('h-s chart: the newest valid result drawn with water isobars and dome', async () => {
    const result = inventedTurbineResult();
    await insertComputedResult(db.pool, plant.turbineId, t0 + 47 * HOUR, result, 0.9);
    const r = await app.inject({
      method: 'GET',
      url: `/api/machines/${plant.turbineId}/hs-chart`,
      headers: auth('viewer'),
    });
    expect(r.statusCode).toBe(200);
    const c = r.json<{
      inlet: { s: number; h: number };
      outlet: { s: number; h: number };
      outletIsentropic: { s: number; h: number };
      inletIsobar: { p: number; points: { s: number; h: number; T: number }[] };
      dome: { liquid: unknown[] } | null;
      entropyGeneration: number;
    }>();
    expect(c.inlet.h).toBeCloseTo(result.inlet.h, 6);
    expect(c.outletIsentropic.s).toBeCloseTo(result.inlet.s, 6); // ideal exit at the inlet entropy (definition)
    expect(c.outlet.s).toBeGreaterThan(c.outletIsentropic.s); // real exit to its right: s_out > s_in (second law)
    expect(c.entropyGeneration).toBeCloseTo(result.outlet.s - result.inlet.s, 6);
    expect(c.inletIsobar.p).toBe(4e6);
    expect(c.dome?.liquid.length).toBe(60);
    // On an isobar the slope dh/ds equals T (Gibbs relation dh = T ds + v dp, DESIGN.md section 5).
    const pts = c.inletIsobar.points;
    const mid = Math.floor(pts.length / 2);
    const slope = (pts[mid + 1]!.h - pts[mid - 1]!.h) / (pts[mid + 1]!.s - pts[mid - 1]!.s);
    expect(slope / pts[mid]!.T).toBeCloseTo(1, 2);
    const none = await app.inject({
      method: 'GET',
      url: `/api/machines/${plant.compressorId}/hs-chart`,
      headers: auth('viewer'),
    });
    expect(none.json<{ code: string }>().code).toBe('API_NO_RESULT');
  });

  it('h-s chart for air: no dome', async () => {
    const result = inventedCompressorResult();
    const id = (
      await db.pool.query<{ id: number }>(
        `INSERT INTO machines (site_id, slug, name, kind, fluid, spec) VALUES ($1, 'ac2', 'AC2 (invented)', 'compressor', '"air"', '{}') RETURNING id`,
        [plant.siteId],
      )
    ).rows[0]!.id;
    await insertComputedResult(db.pool, id, t0, result, 0.8);
    const r = await app.inject({
      method: 'GET',
      url: `/api/machines/${id}/hs-chart`,
      headers: auth('viewer'),
    });
    expect(r.statusCode, r.body).toBe(200);
    const c = r.json<{ dome: unknown; outlet: { h: number } }>();
    expect(c.dome).toBeNull();
    expect(c.outlet.h).toBeCloseTo(result.outlet.h, 6);
  });

  it('metrics: request counter and latency histogram in the Prometheus text format, gauges of others', async () => {
    const r = await app.inject({ method: 'GET', url: '/metrics' });
    expect(r.statusCode).toBe(200);
    expect(r.headers['content-type']).toMatch(/^text\/plain; version=0.0.4/);
    expect(r.body).toMatch(
      /isentrope_http_requests_total\{method="GET",route="\/api\/fleet",status="200"\} \d+/,
    );
    expect(r.body).toContain('# TYPE isentrope_http_request_duration_seconds histogram');
    expect(r.body).toMatch(
      /isentrope_http_request_duration_seconds_bucket\{le="\+Inf",method="GET",route="\/api\/fleet"\} \d+/,
    );
  });
});

describe('anonymous role for a local demo', () => {
  let db: TestDatabase;
  let app: ApiApp;
  beforeAll(async () => {
    db = await createTestDatabase();
    app = await buildTestApp(db.pool, { anonymousRole: 'viewer' });
  });
  afterAll(async () => {
    await app?.close();
    await db?.drop();
  });

  it('reads without credentials but may not write; the first admin was created', async () => {
    const plant = await seedPlant(db.pool);
    expect((await app.inject({ method: 'GET', url: '/api/fleet' })).statusCode).toBe(200);
    const id = await insertAlert(db.pool, plant.turbineId, 'active_unacknowledged');
    const r = await app.inject({ method: 'POST', url: `/api/alerts/${id}/acknowledge`, payload: {} });
    expect(r.statusCode).toBe(403);
    const admin = await db.pool.query<{ role: string }>(`SELECT role FROM users WHERE username = 'admin'`);
    expect(admin.rows[0]?.role).toBe('admin');
    const login = await app.inject({
      method: 'POST',
      url: '/api/auth/login',
      payload: { username: 'admin', password: 'initial-admin-password' },
    });
    expect(login.statusCode).toBe(200);
  });
});
