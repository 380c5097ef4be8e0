/**
 * Notification sender: drains the outbox (deliveries, filled by the alert_events trigger of
 * migrations/0004 in the same transaction as each alert event). Each run claims due deliveries
 * with FOR UPDATE SKIP LOCKED (several instances never claim the same one), pushing their
 * next_attempt_at forward by a lease so that a crash mid-send is retried, then sends:
 *  - webhook: POST of the JSON payload, headers
 *      X-Isentrope-Signature: sha256=<hex HMAC-SHA256 (RFC 2104, FIPS 180-4) of the raw body>
 *      X-Isentrope-Delivery: <delivery id>
 *    a 2xx answer is success;
 *  - email: through nodemailer when SMTP is configured (else email deliveries wait, pending).
 * A failure is retried with exponential backoff (base x 2^(attempt - 1), capped), recorded in the
 * delivery row (attempts, next_attempt_at, last_error, response_status); after maxAttempts the
 * delivery is given up (status 'failed'). Every payload carries the CAUTION text.
 */
import { createHmac } from 'node:crypto';
import { CAUTION } from '@isentrope/monitor';
import type pg from 'pg';

/** The part of a nodemailer transporter the sender uses. */
export interface Mailer {
  sendMail(message: { from: string; to: string; subject: string; text: string }): Promise<unknown>;
}

export interface SenderOptions {
  /** Now [ms]. */
  readonly nowMs: number;
  /** Secret of webhooks whose notifications row holds none. */
  readonly webhookSecret?: string | undefined;
  readonly mailer?: Mailer | undefined;
  readonly mailFrom?: string | undefined;
  /** Deliveries claimed per run; default 20. */
  readonly batch?: number;
  /** Attempts before giving up; default 8. */
  readonly maxAttempts?: number;
  /** First retry delay [ms]; default 30 000; doubles each attempt. */
  readonly backoffBaseMs?: number;
  /** Longest retry delay [ms]; default 3 600 000. */
  readonly backoffMaxMs?: number;
  /** How long a claim holds before another run may take the delivery again [ms]; default 120 000. */
  readonly leaseMs?: number;
  /** HTTP timeout [ms]; default 10 000. */
  readonly timeoutMs?: number;
  /** For tests: the fetch to use; default the global fetch. */
  readonly fetch?: typeof fetch;
}

export interface SenderStats {
  readonly claimed: number;
  readonly sent: number;
  readonly retrying: number;
  readonly failed: number;
}

/** `sha256=<hex>` of the body with the secret (the X-Isentrope-Signature header). */
export function signBody(body: string, secret: string): string {
  return `sha256=${createHmac('sha256', secret).update(body, 'utf8').digest('hex')}`;
}

/** Retry delay after the given attempt (1-based) [ms]: base 2^(attempt-1), capped. */
export function backoffMs(attempt: number, baseMs: number, maxMs: number): number {
  return Math.min(maxMs, baseMs * 2 ** Math.max(0, attempt - 1));
}

interface ClaimRow {
  id: number;
  attempts: number;
  channel: 'webhook' | 'email';
  target: string;
  secret: string | null;
  event_id: number;
  event_time: Date;
  from_state: string | null;
  to_state: string;
  actor: string;
  note: string | null;
  event_data: Record<string, unknown>;
  alert_id: number;
  category: string;
  tag_id: number | null;
  level: string;
  severity: string;
  state: string;
  message: string;
  evidence: Record<string, unknown>;
  raised_at: Date;
  machine_id: number;
  machine_slug: string;
  machine_name: string;
}

export interface NotificationPayload {
  readonly delivery: number;
  readonly attempt: number;
  readonly event: {
    readonly id: number;
    readonly time: string;
    readonly fromState: string | null;
    readonly toState: string;
    readonly actor: string;
    readonly note: string | null;
  };
  readonly alert: {
    readonly id: number;
    readonly category: string;
    readonly tagId: number | null;
    readonly level: string;
    readonly severity: string;
    readonly state: string;
    readonly message: string;
    readonly evidence: Record<string, unknown>;
    readonly raisedAt: string;
  };
  readonly machine: { readonly id: number; readonly slug: string; readonly name: string };
  /** Trend link of the judged window (relative to the dashboard's address). */
  readonly link: string | null;
  readonly caution: string;
}

export function buildPayload(r: ClaimRow): NotificationPayload {
  const link = typeof r.evidence.link === 'string' ? r.evidence.link : null;
  return {
    delivery: r.id,
    attempt: r.attempts,
    event: {
      id: r.event_id,
      time: r.event_time.toISOString(),
      fromState: r.from_state,
      toState: r.to_state,
      actor: r.actor,
      note: r.note,
    },
    alert: {
      id: r.alert_id,
      category: r.category,
      tagId: r.tag_id,
      level: r.level,
      severity: r.severity,
      state: r.state,
      message: r.message,
      evidence: r.evidence,
      raisedAt: r.raised_at.toISOString(),
    },
    machine: { id: r.machine_id, slug: r.machine_slug, name: r.machine_name },
    link,
    caution: CAUTION,
  };
}

function emailText(p: NotificationPayload): string {
  return [
    `${p.machine.name}: ${p.alert.category} alert ${p.alert.id} is now ${p.event.toState} (was ${p.event.fromState ?? 'none'}), by ${p.event.actor} at ${p.event.time}.`,
    p.event.note === null ? '' : `Note: ${p.event.note}`,
    p.alert.message,
    p.link === null ? '' : `Trend: ${p.link}`,
    '',
    p.caution,
  ]
    .filter((l, i, a) => l !== '' || i === a.length - 2)
    .join('\n');
}

class DeliveryError extends Error {
  constructor(
    message: string,
    readonly responseStatus: number | null,
  ) {
    super(message);
    this.name = 'DeliveryError';
  }
}

async function sendWebhook(r: ClaimRow, body: string, o: SenderOptions): Promise<number> {
  const secret = r.secret ?? o.webhookSecret;
  if (secret === undefined || secret === '')
    throw new DeliveryError('no webhook secret configured: the body cannot be signed', null);
  const doFetch = o.fetch ?? fetch;
  let res: Response;
  try {
    res = await doFetch(r.target, {
      method: 'POST',
      headers: {
        'content-type': 'application/json; charset=utf-8',
        'x-isentrope-signature': signBody(body, secret),
        'x-isentrope-delivery': String(r.id),
      },
      body,
      signal: AbortSignal.timeout(o.timeoutMs ?? 10_000),
    });
  } catch (error) {
    throw new DeliveryError(
      `request failed: ${error instanceof Error ? error.message : String(error)}`,
      null,
    );
  }
  // Read the answer so the connection is released.
  await res.arrayBuffer().catch(() => undefined);
  if (res.status < 200 || res.status >= 300) throw new DeliveryError(`HTTP ${res.status}`, res.status);
  return res.status;
}

/** One drain of the outbox at time nowMs. */
export async function runNotificationsOnce(pool: pg.Pool, o: SenderOptions): Promise<SenderStats> {
  const maxAttempts = o.maxAttempts ?? 8;
  const base = o.backoffBaseMs ?? 30_000;
  const cap = o.backoffMaxMs ?? 3_600_000;
  const now = new Date(o.nowMs);
  const claimed = await pool.query<ClaimRow>(
    `WITH due AS (
       SELECT d.id FROM deliveries d JOIN notifications n ON n.id = d.notification_id
        WHERE d.status = 'pending' AND d.next_attempt_at <= $1 AND ($4 OR n.channel <> 'email')
        ORDER BY d.next_attempt_at, d.id LIMIT $2 FOR UPDATE OF d SKIP LOCKED),
     claimed AS (
       UPDATE deliveries d SET attempts = d.attempts + 1, next_attempt_at = $1::timestamptz + make_interval(secs => $3::float8 / 1000)
         FROM due WHERE d.id = due.id RETURNING d.id, d.attempts, d.notification_id, d.alert_event_id)
     SELECT c.id::int, c.attempts, n.channel, n.target, n.secret,
            e.id::int AS event_id, e.time AS event_time, e.from_state, e.to_state, e.actor, e.note, e.data AS event_data,
            a.id::int AS alert_id, a.category, a.tag_id, a.level, a.severity, a.state, a.message, a.evidence, a.raised_at,
            m.id AS machine_id, m.slug AS machine_slug, m.name AS machine_name
       FROM claimed c
       JOIN notifications n ON n.id = c.notification_id
       JOIN alert_events e ON e.id = c.alert_event_id
       JOIN alerts a ON a.id = e.alert_id
       JOIN machines m ON m.id = a.machine_id
      ORDER BY e.time, e.id`,
    [now, o.batch ?? 20, o.leaseMs ?? 120_000, o.mailer !== undefined],
  );
  let sent = 0;
  let retrying = 0;
  let failed = 0;
  for (const r of claimed.rows) {
    const payload = buildPayload(r);
    try {
      let status: number | null = null;
      if (r.channel === 'webhook') status = await sendWebhook(r, JSON.stringify(payload), o);
      else {
        if (o.mailer === undefined) throw new DeliveryError('SMTP is not configured', null);
        await o.mailer.sendMail({
          from: o.mailFrom ?? 'isentrope@localhost',
          to: r.target,
          subject: `[Isentrope] ${payload.machine.name}: ${payload.alert.category} ${payload.alert.level} ${payload.event.toState}`,
          text: emailText(payload),
        });
      }
      await pool.query(
        `UPDATE deliveries SET status = 'sent', sent_at = $2, response_status = $3, last_error = NULL WHERE id = $1`,
        [r.id, now, status],
      );
      sent++;
    } catch (error) {
      const message = error instanceof Error ? error.message : String(error);
      const responseStatus = error instanceof DeliveryError ? error.responseStatus : null;
      const giveUp = r.attempts >= maxAttempts;
      await pool.query(
        `UPDATE deliveries SET status = $2, last_error = $3, response_status = $4,
                next_attempt_at = CASE WHEN $2 = 'pending' THEN $5 ELSE next_attempt_at END
          WHERE id = $1`,
        [
          r.id,
          giveUp ? 'failed' : 'pending',
          `attempt ${r.attempts}: ${message}`,
          responseStatus,
          new Date(o.nowMs + backoffMs(r.attempts, base, cap)),
        ],
      );
      if (giveUp) failed++;
      else retrying++;
    }
  }
  return { claimed: claimed.rows.length, sent, retrying, failed };
}

/**
 * Notification targets from the service configuration (environment), kept as notifications rows
 * so that the outbox covers them: 'config-webhook' (every alert, the configured secret) and
 * 'config-email' (to the configured address, when SMTP is set). Disabled when unset.
 */
export async function ensureConfiguredTargets(
  pool: pg.Pool,
  config: { readonly webhookUrl?: string | undefined; readonly emailTo?: string | undefined },
): Promise<void> {
  const upsert = async (
    name: string,
    channel: 'webhook' | 'email',
    target: string | undefined,
  ): Promise<void> => {
    if (target === undefined) {
      await pool.query(`UPDATE notifications SET enabled = false WHERE name = $1`, [name]);
      return;
    }
    await pool.query(
      `INSERT INTO notifications (name, channel, target, enabled) VALUES ($1, $2, $3, true)
       ON CONFLICT (name) DO UPDATE SET channel = EXCLUDED.channel, target = EXCLUDED.target, enabled = true`,
      [name, channel, target],
    );
  };
  await upsert('config-webhook', 'webhook', config.webhookUrl);
  await upsert('config-email', 'email', config.emailTo);
}
