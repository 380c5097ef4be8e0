import {
  type AlertEvent,
  initialAlert,
  STATUS_TO_STORED,
  STORED_ALERT_STATES,
  stepAlert,
  storedAlertState,
} from '@isentrope/monitor';
import type { FastifyPluginAsyncZod } from 'fastify-type-provider-zod';
import { z } from 'zod';
import { appendAudit, inTransaction } from '../audit.js';
import type { Principal } from '../auth/roles.js';
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

interface AlertRow {
  id: number;
  machine_id: number;
  machine_name: string;
  category: 'drift' | 'instrument';
  tag_id: number | null;
  level: 'warning' | 'alarm';
  severity: 'low' | 'medium' | 'high' | 'urgent';
  state: (typeof STORED_ALERT_STATES)[number];
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
  state: z.enum(STORED_ALERT_STATES),
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

const actionBody = z.object({ note: z.string().max(2000).optional() });

const eventSchema = z.object({
  time: z.string(),
  fromState: z.string().nullable(),
  toState: z.string(),
  actor: z.string(),
  note: z.string().nullable(),
});

type Client = Parameters<Parameters<typeof inTransaction>[1]>[0];
type AlertOut = z.infer<typeof alertSchema>;

async function alertById(
  db: Pick<Client, 'query'>,
  id: number,
  lock: boolean,
): Promise<AlertRow | undefined> {
  const { rows } = await db.query<AlertRow>(
    `SELECT ${COLS} FROM alerts a JOIN machines m ON m.id = a.machine_id WHERE a.id = $1${lock ? ' FOR UPDATE OF a' : ''}`,
    [id],
  );
  return rows[0];
}

/** The reducer's state of a row (packages/monitor storedAlertState); a suppressed row acts as normal. */
function reducerState(a: AlertRow) {
  return (
    storedAlertState({
      state: a.state,
      category: a.category,
      level: a.level,
      cleared: a.cleared_at !== null,
      shelvedUntilMs: a.shelved_until?.getTime() ?? null,
      shelvedBy: a.shelved_by,
    }) ?? initialAlert(a.category === 'instrument' ? 'instrument-fault' : 'drift')
  );
}

/** Store the reducer's step of an operator action: the row's new state and one event per transition. */
async function storeActionStep(
  client: Client,
  id: number,
  username: string,
  event: AlertEvent,
  nowMs: number,
  step: ReturnType<typeof stepAlert>,
): Promise<void> {
  const s = step.state;
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
      STATUS_TO_STORED[s.status],
      event.type === 'acknowledge',
      new Date(nowMs),
      username,
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
        STATUS_TO_STORED[t.from],
        STATUS_TO_STORED[t.to],
        t.by ?? 'system',
        t.comment ?? null,
        JSON.stringify({ reason: t.reason }),
      ],
    );
}

/** Apply one operator action through the lifecycle reducer, store the new state, its events and the audit row. */
async function act(
  ctx: ApiContext,
  id: number,
  actor: Principal,
  event: AlertEvent,
  action: string,
): Promise<AlertOut> {
  return inTransaction(ctx.pool, async (client) => {
    const a = await alertById(client, id, true);
    if (a === undefined) throw new ApiError('API_NOT_FOUND', { entity: 'alert', id });
    const now = ctx.now();
    const step = stepAlert(reducerState(a), event, now);
    if (step.rejected !== undefined)
      throw new ApiError('API_ALERT_REJECTED', {
        id,
        reason: step.rejected.reason,
        rejection: step.rejected.code,
      });
    await storeActionStep(client, id, actor.username, event, now, step);
    const after = (await alertById(client, id, false))!;
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

type App = Parameters<FastifyPluginAsyncZod<{ ctx: ApiContext }>>[0];

function listAlertRoute(app: App, ctx: ApiContext): void {
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
}

function alertDetailRoute(app: App, ctx: ApiContext): void {
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
      const a = await alertById(ctx.pool, request.params.id, false);
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
}

const actionResponse = { 200: alertSchema, ...errorResponses, 409: problemSchema };

/** The operator actions without a body of their own: acknowledge and unshelve. */
function simpleActionRoute(
  app: App,
  ctx: ApiContext,
  verb: 'acknowledge' | 'unshelve',
  summary: string,
): void {
  app.post(
    `/alerts/:id/${verb}`,
    {
      config: { role: 'engineer' },
      schema: {
        tags: ['alerts'],
        summary,
        params: idParam,
        body: actionBody.optional(),
        response: actionResponse,
      },
    },
    async (request) => {
      const p = request.principal!;
      const note = request.body?.note;
      return act(
        ctx,
        request.params.id,
        p,
        { type: verb, user: p.username, ...(note !== undefined ? { comment: note } : {}) },
        `alert.${verb}`,
      );
    },
  );
}

function shelveRoute(app: App, ctx: ApiContext): void {
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
        ctx,
        request.params.id,
        p,
        { type: 'shelve', user: p.username, untilMs, ...(b.note !== undefined ? { comment: b.note } : {}) },
        'alert.shelve',
      );
    },
  );
}

export const alertRoutes: FastifyPluginAsyncZod<{ ctx: ApiContext }> = async (app, { ctx }) => {
  listAlertRoute(app, ctx);
  alertDetailRoute(app, ctx);
  simpleActionRoute(app, ctx, 'acknowledge', 'Acknowledge an alert');
  shelveRoute(app, ctx);
  simpleActionRoute(app, ctx, 'unshelve', 'Unshelve an alert');
};
