import { type AlertEvent, type AlertState, type AlertStatus, stepAlert } from '@isentrope/monitor';
import type { FastifyPluginAsyncZod } from 'fastify-type-provider-zod';
import { z } from 'zod';
import { appendAudit, inTransaction } from '../audit.js';
import type { ApiContext } from '../context.js';
import { ApiError } from '../errors.js';
import {
  decodeCursor,
  encodeCursor,
  errorResponses,
  idParam,
  isoTime,
  nextLink,
  page,
  pageQuery,
  problemSchema,
} from '../http/schemas.js';

/** Stored alert states (migrations/0003) and the lifecycle reducer's statuses (packages/monitor/src/alerts.ts). */
const DB_TO_STATUS: Readonly<Record<string, AlertStatus>> = {
  normal: 'normal',
  active_unacknowledged: 'active-unack',
  active_acknowledged: 'active-ack',
  returned_unacknowledged: 'rtn-unack',
  shelved: 'shelved',
  out_of_service: 'out-of-service',
};
const STATUS_TO_DB: Readonly<Record<AlertStatus, string>> = {
  normal: 'normal',
  'active-unack': 'active_unacknowledged',
  'active-ack': 'active_acknowledged',
  'rtn-unack': 'returned_unacknowledged',
  shelved: 'shelved',
  'out-of-service': 'out_of_service',
};

const STATES = [
  'normal',
  'active_unacknowledged',
  'active_acknowledged',
  'returned_unacknowledged',
  'shelved',
  'suppressed',
  'out_of_service',
] as const;

interface AlertRow {
  id: number;
  machine_id: number;
  machine_name: string;
  category: 'drift' | 'instrument';
  tag_id: number | null;
  level: 'warning' | 'alarm';
  severity: 'low' | 'medium' | 'high' | 'urgent';
  state: (typeof STATES)[number];
  message: string;
  evidence: Record<string, unknown>;
  raised_at: Date;
  acknowledged_at: Date | null;
  acknowledged_by: string | null;
  shelved_until: Date | null;
  shelved_by: string | null;
  cleared_at: Date | null;
  updated_at: Date;
}

const alertSchema = z.object({
  id: z.number().int(),
  machineId: z.number().int(),
  machineName: z.string(),
  category: z.enum(['drift', 'instrument']),
  tagId: z.number().int().nullable(),
  level: z.enum(['warning', 'alarm']),
  severity: z.enum(['low', 'medium', 'high', 'urgent']),
  state: z.enum(STATES),
  message: z.string(),
  evidence: z.record(z.string(), z.unknown()),
  raisedAt: z.string(),
  acknowledgedAt: z.string().nullable(),
  acknowledgedBy: z.string().nullable(),
  shelvedUntil: z.string().nullable(),
  shelvedBy: z.string().nullable(),
  clearedAt: z.string().nullable(),
});

function alertOut(a: AlertRow): z.infer<typeof alertSchema> {
  return {
    id: a.id,
    machineId: a.machine_id,
    machineName: a.machine_name,
    category: a.category,
    tagId: a.tag_id,
    level: a.level,
    severity: a.severity,
    state: a.state,
    message: a.message,
    evidence: a.evidence,
    raisedAt: a.raised_at.toISOString(),
    acknowledgedAt: a.acknowledged_at?.toISOString() ?? null,
    acknowledgedBy: a.acknowledged_by,
    shelvedUntil: a.shelved_until?.toISOString() ?? null,
    shelvedBy: a.shelved_by,
    clearedAt: a.cleared_at?.toISOString() ?? null,
  };
}

const COLS = `a.id::int, a.machine_id, m.name AS machine_name, a.category, a.tag_id, a.level, a.severity, a.state, a.message,
  a.evidence, a.raised_at, a.acknowledged_at, a.acknowledged_by, a.shelved_until, a.shelved_by, a.cleared_at, a.updated_at`;

/**
 * The reducer's state from a stored row. Whether the condition is still active: true in the active
 * states, false once returned or cleared; while shelved or out of service, active unless cleared_at
 * is set (the alert job sets it when the condition returns).
 */
function toState(a: AlertRow): AlertState {
  const status = DB_TO_STATUS[a.state] ?? 'normal';
  const conditionActive =
    status === 'active-unack' || status === 'active-ack'
      ? true
      : status === 'rtn-unack' || status === 'normal'
        ? false
        : a.cleared_at === null;
  return {
    type: a.category === 'instrument' ? 'instrument-fault' : 'drift',
    status,
    conditionActive,
    severity: a.level,
    ...(a.shelved_until !== null ? { shelvedUntil: a.shelved_until.getTime() } : {}),
    ...(a.shelved_by !== null ? { shelvedBy: a.shelved_by } : {}),
  };
}

const actionBody = z.object({ note: z.string().max(2000).optional() });

export const alertRoutes: FastifyPluginAsyncZod<{ ctx: ApiContext }> = async (app, { ctx }) => {
  app.get(
    '/alerts',
    {
      schema: {
        tags: ['alerts'],
        summary: 'Alerts, newest first: open ones (not normal) by default',
        querystring: pageQuery.extend({
          status: z.enum(['open', 'all']).default('open'),
          machine: z.coerce.number().int().positive().optional(),
          category: z.enum(['drift', 'instrument']).optional(),
        }),
        response: { 200: page(alertSchema), ...errorResponses },
      },
    },
    async (request) => {
      const q = request.query;
      const cursor = decodeCursor(q.cursor);
      const before = cursor === undefined ? undefined : Number(cursor[0]);
      if (before !== undefined && !Number.isInteger(before))
        throw new ApiError('API_BAD_CURSOR', { cursor: q.cursor });
      const { rows } = await ctx.pool.query<AlertRow>(
        `SELECT ${COLS} FROM alerts a JOIN machines m ON m.id = a.machine_id
          WHERE ($1::boolean IS FALSE OR a.state <> 'normal') AND ($2::int IS NULL OR a.machine_id = $2)
            AND ($3::text IS NULL OR a.category = $3) AND ($4::bigint IS NULL OR a.id < $4)
          ORDER BY a.id DESC LIMIT $5`,
        [q.status === 'open', q.machine ?? null, q.category ?? null, before ?? null, q.limit + 1],
      );
      const items = rows.slice(0, q.limit);
      const last = items.at(-1);
      return {
        items: items.map(alertOut),
        next: nextLink(
          request.url,
          rows.length > q.limit && last !== undefined ? encodeCursor([last.id]) : undefined,
        ),
      };
    },
  );

  const eventSchema = z.object({
    time: z.string(),
    fromState: z.string().nullable(),
    toState: z.string(),
    actor: z.string(),
    note: z.string().nullable(),
  });

  app.get(
    '/alerts/:id',
    {
      schema: {
        tags: ['alerts'],
        summary: 'One alert with its history',
        params: idParam,
        response: { 200: alertSchema.extend({ events: z.array(eventSchema) }), ...errorResponses },
      },
    },
    async (request) => {
      const { rows } = await ctx.pool.query<AlertRow>(
        `SELECT ${COLS} FROM alerts a JOIN machines m ON m.id = a.machine_id WHERE a.id = $1`,
        [request.params.id],
      );
      const a = rows[0];
      if (a === undefined) throw new ApiError('API_NOT_FOUND', { entity: 'alert', id: request.params.id });
      const events = await ctx.pool.query<{
        time: Date;
        from_state: string | null;
        to_state: string;
        actor: string;
        note: string | null;
      }>(
        `SELECT time, from_state, to_state, actor, note FROM alert_events WHERE alert_id = $1 ORDER BY time, id`,
        [a.id],
      );
      return {
        ...alertOut(a),
        events: events.rows.map((e) => ({
          time: e.time.toISOString(),
          fromState: e.from_state,
          toState: e.to_state,
          actor: e.actor,
          note: e.note,
        })),
      };
    },
  );

  /** Apply one operator action through the lifecycle reducer, store the new state, its events and the audit row. */
  async function act(
    id: number,
    principalName: string,
    request: { principal: import('../auth/roles.js').Principal | undefined },
    event: AlertEvent,
    action: string,
  ): Promise<z.infer<typeof alertSchema>> {
    const actor = request.principal!;
    return inTransaction(ctx.pool, async (client) => {
      const { rows } = await client.query<AlertRow>(
        `SELECT ${COLS} FROM alerts a JOIN machines m ON m.id = a.machine_id WHERE a.id = $1 FOR UPDATE OF a`,
        [id],
      );
      const a = rows[0];
      if (a === undefined) throw new ApiError('API_NOT_FOUND', { entity: 'alert', id });
      const now = ctx.now();
      const step = stepAlert(toState(a), event, now);
      if (step.rejected !== undefined)
        throw new ApiError('API_ALERT_REJECTED', {
          id,
          reason: step.rejected.reason,
          rejection: step.rejected.code,
        });
      const s = step.state;
      const newState = STATUS_TO_DB[s.status];
      const acknowledged = event.type === 'acknowledge';
      await client.query(
        `UPDATE alerts SET state = $2,
            acknowledged_at = CASE WHEN $3 THEN $4 ELSE acknowledged_at END,
            acknowledged_by = CASE WHEN $3 THEN $5 ELSE acknowledged_by END,
            shelved_until = $6, shelved_by = $7,
            cleared_at = CASE WHEN $2 = 'normal' AND cleared_at IS NULL THEN $4 ELSE cleared_at END,
            updated_at = $4
          WHERE id = $1`,
        [
          id,
          newState,
          acknowledged,
          new Date(now),
          principalName,
          s.shelvedUntil === undefined ? null : new Date(s.shelvedUntil),
          s.shelvedBy ?? null,
        ],
      );
      for (const t of step.transitions)
        await client.query(
          `INSERT INTO alert_events (alert_id, time, from_state, to_state, actor, note, data) VALUES ($1, $2, $3, $4, $5, $6, $7)`,
          [
            id,
            new Date(t.at),
            STATUS_TO_DB[t.from],
            STATUS_TO_DB[t.to],
            t.by ?? 'system',
            t.comment ?? null,
            JSON.stringify({ reason: t.reason }),
          ],
        );
      const after = (
        await client.query<AlertRow>(
          `SELECT ${COLS} FROM alerts a JOIN machines m ON m.id = a.machine_id WHERE a.id = $1`,
          [id],
        )
      ).rows[0]!;
      await appendAudit(client, {
        actor,
        action,
        entity: 'alert',
        entityId: id,
        before: alertOut(a),
        after: alertOut(after),
      });
      return alertOut(after);
    });
  }

  const actionResponse = { 200: alertSchema, ...errorResponses, 409: problemSchema };

  app.post(
    '/alerts/:id/acknowledge',
    {
      config: { role: 'engineer' },
      schema: {
        tags: ['alerts'],
        summary: 'Acknowledge an alert',
        params: idParam,
        body: actionBody.optional(),
        response: actionResponse,
      },
    },
    async (request) => {
      const p = request.principal!;
      const note = request.body?.note;
      return act(
        request.params.id,
        p.username,
        request,
        { type: 'acknowledge', user: p.username, ...(note !== undefined ? { comment: note } : {}) },
        'alert.acknowledge',
      );
    },
  );

  app.post(
    '/alerts/:id/shelve',
    {
      config: { role: 'engineer' },
      schema: {
        tags: ['alerts'],
        summary:
          'Shelve an alert until a time (ISA-18.2 shelving: annunciation suppressed, condition still tracked)',
        params: idParam,
        body: actionBody
          .extend({
            until: isoTime.optional(),
            hours: z
              .number()
              .positive()
              .max(24 * 30)
              .optional()
              .describe('Alternative to until [h]'),
          })
          .refine((b) => (b.until === undefined) !== (b.hours === undefined), {
            error: 'give exactly one of until or hours',
          }),
        response: actionResponse,
      },
    },
    async (request) => {
      const p = request.principal!;
      const b = request.body;
      const untilMs = b.until !== undefined ? Date.parse(b.until) : ctx.now() + (b.hours ?? 0) * 3_600_000;
      return act(
        request.params.id,
        p.username,
        request,
        { type: 'shelve', user: p.username, untilMs, ...(b.note !== undefined ? { comment: b.note } : {}) },
        'alert.shelve',
      );
    },
  );

  app.post(
    '/alerts/:id/unshelve',
    {
      config: { role: 'engineer' },
      schema: {
        tags: ['alerts'],
        summary: 'Unshelve an alert',
        params: idParam,
        body: actionBody.optional(),
        response: actionResponse,
      },
    },
    async (request) => {
      const p = request.principal!;
      const note = request.body?.note;
      return act(
        request.params.id,
        p.username,
        request,
        { type: 'unshelve', user: p.username, ...(note !== undefined ? { comment: note } : {}) },
        'alert.unshelve',
      );
    },
  );
};
