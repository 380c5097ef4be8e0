import { createHmac } from 'node:crypto';
import { createServer, type Server } from 'node:http';
import type { AddressInfo } from 'node:net';
import { CAUTION } from '@isentrope/monitor';
import nodemailer from 'nodemailer';
import pino from 'pino';
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { createTestDatabase, type TestDatabase } from '../../../../test/support/database.js';
import { seedBaseline, seedResults, seedTestMachine, seedTestSite } from '../alerts/seed.js';
import { startJobs } from '../scheduler.js';
import { type Mailer, runNotificationsOnce } from './sender.js';

let db: TestDatabase;
let server: Server;
let url: string;
const SECRET = 'test-secret (invented)';
const received: { body: string; signature: string | undefined; delivery: string | undefined }[] = [];
let failNext = 0;
const T0 = Date.UTC(2026, 3, 6); // invented data
const MIN = 60_000;
const H = 3_600_000;

beforeAll(async () => {
  db = await createTestDatabase();
  server = createServer((req, res) => {
    const chunks: Buffer[] = [];
    req.on('data', (c: Buffer) => chunks.push(c));
    req.on('end', () => {
      if (failNext > 0) {
        failNext--;
        res.statusCode = 500;
        res.end('receiver down (test)');
        return;
      }
      received.push({
        body: Buffer.concat(chunks).toString('utf8'),
        signature: req.headers['x-isentrope-signature'] as string | undefined,
        delivery: req.headers['x-isentrope-delivery'] as string | undefined,
      });
      res.statusCode = 204;
      res.end();
    });
  });
  await new Promise<void>((resolve) => server.listen(0, '127.0.0.1', resolve));
  url = `http://127.0.0.1:${(server.address() as AddressInfo).port}/hook`;
});
afterAll(async () => {
  await new Promise((resolve) => server?.close(resolve));
  await db?.drop();
});

describe('notifications', () => {
  it('two job instances evaluate each tick once; every event is delivered once, signed, after a 500', async () => {
    const siteId = await seedTestSite(db.pool, 'notify-works');
    const m = await seedTestMachine(db.pool, siteId, 'notify-1', {
      bands: { warning: 2, alarm: 4, onDelayS: 600, offDelayS: 600, deadband: 0.5 },
    });
    await seedBaseline(db.pool, m.id, [0.8], T0 - 2 * 86_400_000, T0 - 86_400_000);
    await db.pool.query(
      `INSERT INTO notifications (name, channel, target, secret) VALUES ('ops hook (invented)', 'webhook', $1, $2),
              ('ops mail (invented)', 'email', 'ops@example.invalid', NULL)`,
      [url, SECRET],
    );
    // Drift -5 points for 2 h, then back (invented): warning, alarm, return.
    const rows = [];
    for (let t = T0; t < T0 + 5 * H; t += MIN)
      rows.push({
        t,
        efficiency: 0.8 + (t >= T0 + H && t < T0 + 3 * H ? -0.05 : 0),
        uEfficiency: 0.001,
        operatingPoint: 50,
      });
    await seedResults(db.pool, m.id, rows);

    const silent = pino({ level: 'silent' });
    const make = () =>
      startJobs({
        pool: db.pool,
        databaseUrl: db.url,
        logger: silent,
        manual: true,
        config: { webhookSecret: 'unused-default (invented)', notifications: { backoffBaseMs: 30_000 } },
      });
    const [a, b] = await Promise.all([make(), make()]);
    const tick = T0 + 5 * H + MIN;
    const outcomes = await Promise.all([a.runTick('alerts', tick), b.runTick('alerts', tick)]);
    outcomes.push(await b.runTick('alerts', tick));
    expect(outcomes.filter((o) => o === 'ran')).toHaveLength(1);
    await Promise.all([a.stop(), b.stop()]);

    const events = await db.pool.query<{ id: number; to_state: string }>(
      `SELECT e.id::int, e.to_state FROM alert_events e JOIN alerts al ON al.id = e.alert_id WHERE al.machine_id = $1 ORDER BY e.id`,
      [m.id],
    );
    // Warning raised (active, unacknowledged); the rise to alarm annunciates again but the state
    // stays active-unack (no transition); the return gives returned-unacknowledged.
    expect(events.rows.map((e) => e.to_state)).toEqual(['active_unacknowledged', 'returned_unacknowledged']);
    const deliveries = await db.pool.query<{ n: number }>(`SELECT count(*)::int AS n FROM deliveries`);
    expect(deliveries.rows[0]?.n).toBe(2 * events.rows.length); // one per target and event (outbox)

    const sent: Parameters<Mailer['sendMail']>[0][] = [];
    const transport = nodemailer.createTransport({ jsonTransport: true });
    const mailer: Mailer = {
      async sendMail(msg) {
        sent.push(msg);
        await transport.sendMail(msg);
      },
    };
    // The receiver answers 500 to the first request.
    failNext = 1;
    const now = tick + 5_000;
    const first = await Promise.all([
      runNotificationsOnce(db.pool, { nowMs: now, mailer, backoffBaseMs: 30_000 }),
      runNotificationsOnce(db.pool, { nowMs: now, mailer, backoffBaseMs: 30_000 }),
    ]);
    expect(first[0].claimed + first[1].claimed).toBe(4); // SKIP LOCKED: no delivery claimed twice
    expect(first[0].retrying + first[1].retrying).toBe(1);
    const failedRow = await db.pool.query<{
      attempts: number;
      last_error: string;
      response_status: number;
      next: Date;
    }>(
      `SELECT attempts, last_error, response_status, next_attempt_at AS next FROM deliveries WHERE status = 'pending'`,
    );
    expect(failedRow.rows).toHaveLength(1);
    expect(failedRow.rows[0]).toMatchObject({ attempts: 1, response_status: 500 });
    expect(failedRow.rows[0]?.last_error).toContain('HTTP 500');
    expect(failedRow.rows[0]?.next.getTime()).toBe(now + 30_000);
    // Not due before the backoff has passed.
    expect((await runNotificationsOnce(db.pool, { nowMs: now + 29_000, mailer })).claimed).toBe(0);
    const retry = await runNotificationsOnce(db.pool, { nowMs: now + 30_000, mailer });
    expect(retry.sent).toBe(1);
    expect((await runNotificationsOnce(db.pool, { nowMs: now + 3_600_000, mailer })).claimed).toBe(0);

    // Each event reached the webhook exactly once, signed with the target's secret.
    expect(received).toHaveLength(events.rows.length);
    const eventIds = received.map((r) => (JSON.parse(r.body) as { event: { id: number } }).event.id).sort();
    expect(eventIds).toEqual(events.rows.map((e) => e.id).sort());
    for (const r of received) {
      // HMAC-SHA256 (RFC 2104) recomputed independently of the sender.
      expect(r.signature).toBe(`sha256=${createHmac('sha256', SECRET).update(r.body).digest('hex')}`);
      const p = JSON.parse(r.body) as { delivery: number; caution: string; alert: { message: string } };
      expect(String(p.delivery)).toBe(r.delivery);
      expect(p.caution).toBe(CAUTION);
      expect(p.alert.message).toContain(CAUTION);
    }
    // Email went out once per event too, with the caution.
    expect(sent).toHaveLength(events.rows.length);
    for (const msg of sent) {
      expect(msg.to).toBe('ops@example.invalid');
      expect(msg.text).toContain(CAUTION);
    }
    const status = await db.pool.query<{ status: string; n: number }>(
      `SELECT status, count(*)::int AS n FROM deliveries GROUP BY status`,
    );
    expect(status.rows).toEqual([{ status: 'sent', n: 4 }]);
  });

  it('gives up after the last attempt', async () => {
    await db.pool.query(`UPDATE notifications SET enabled = false`);
    await db.pool.query(
      `INSERT INTO notifications (name, channel, target, secret) VALUES ('dead hook (invented)', 'webhook', 'http://127.0.0.1:1/none', 's')`,
    );
    const ev = await db.pool.query<{ id: number }>(`SELECT id::int FROM alert_events ORDER BY id LIMIT 1`);
    // An operator's action through the API is an alert event too: it is enqueued by the same trigger.
    const alertId = await db.pool.query<{ alert_id: number }>(
      `SELECT alert_id::int FROM alert_events WHERE id = $1`,
      [ev.rows[0]?.id],
    );
    await db.pool.query(
      `INSERT INTO alert_events (alert_id, time, from_state, to_state, actor, note) VALUES ($1, $2, 'returned_unacknowledged', 'normal', 'op (invented)', 'seen')`,
      [alertId.rows[0]?.alert_id, new Date(T0 + 6 * H)],
    );
    let now = T0 + 6 * H;
    for (let k = 0; k < 3; k++) {
      await runNotificationsOnce(db.pool, {
        nowMs: now,
        maxAttempts: 3,
        backoffBaseMs: 1000,
        timeoutMs: 2000,
      });
      now += 10_000;
    }
    const d = await db.pool.query<{ status: string; attempts: number; last_error: string }>(
      `SELECT d.status, d.attempts, d.last_error FROM deliveries d JOIN notifications n ON n.id = d.notification_id WHERE n.name = 'dead hook (invented)'`,
    );
    expect(d.rows).toHaveLength(1);
    expect(d.rows[0]).toMatchObject({ status: 'failed', attempts: 3 });
    expect(d.rows[0]?.last_error).toMatch(/^attempt 3: request failed/);
  });

  it('the configured webhook is a target from start: an event raised before the first notifications tick is delivered once', async () => {
    await db.pool.query(`UPDATE notifications SET enabled = false`);
    const jobs = await startJobs({
      pool: db.pool,
      databaseUrl: db.url,
      logger: pino({ level: 'silent' }),
      manual: true,
      config: { webhookUrl: url, webhookSecret: SECRET },
    });
    try {
      const alert = await db.pool.query<{ alert_id: number }>(
        `SELECT alert_id::int FROM alert_events ORDER BY id LIMIT 1`,
      );
      const at = T0 + 7 * H;
      // An operator's action before any notifications tick has run (invented).
      const ev = await db.pool.query<{ id: number }>(
        `INSERT INTO alert_events (alert_id, time, from_state, to_state, actor, note)
         VALUES ($1, $2, 'normal', 'active_unacknowledged', 'op (invented)', 'early') RETURNING id::int`,
        [alert.rows[0]?.alert_id, new Date(at)],
      );
      const before = received.length;
      expect(await jobs.runTick('notifications', at + 10_000)).toBe('ran');
      expect(await jobs.runTick('notifications', at + 20_000)).toBe('ran');
      const got = received
        .slice(before)
        .map((r) => (JSON.parse(r.body) as { event: { id: number } }).event.id);
      expect(got).toEqual([ev.rows[0]?.id]);
    } finally {
      await jobs.stop();
    }
  });
});
