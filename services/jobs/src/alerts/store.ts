/**
 * Alert rows and their lifecycle in the database. The state is read from the alerts table at each
 * step (an operator's acknowledge or shelve through the API is respected) and advanced with the
 * monitor reducer stepAlert using condition events only (activate, clear) and the clock (tick, for
 * shelve expiry). Every transition is stored in alert_events (actor 'system') and audit_log; the
 * alert_events insert enqueues its notifications in the same transaction (outbox trigger,
 * migrations/0004).
 */
import {
  type AlertEvent,
  type AlertState,
  CAUTION,
  initialAlert,
  STATUS_TO_STORED,
  type StoredAlertState,
  stepAlert,
  storedAlertState,
} from '@isentrope/monitor';
import { appendAudit, type Queryable } from '@isentrope/store';
import type { AlertSeverityColumn } from './config.js';
import { isoSeconds } from './times.js';

export interface OpenAlertRow {
  id: number;
  category: 'drift' | 'instrument';
  tag_id: number | null;
  level: 'warning' | 'alarm';
  state: StoredAlertState;
  shelved_until_ms: number | null;
  shelved_by: string | null;
  cleared_at: Date | null;
  evidence: Record<string, unknown>;
}

/** Open alerts of a machine (not normal), locked for this transaction. */
export async function lockOpenAlerts(db: Queryable, machineId: number): Promise<OpenAlertRow[]> {
  const res = await db.query<OpenAlertRow>(
    `SELECT id::int, category, tag_id, level, state,
            (extract(epoch FROM shelved_until) * 1000)::float8 AS shelved_until_ms, shelved_by, cleared_at, evidence
       FROM alerts WHERE machine_id = $1 AND state <> 'normal' ORDER BY id FOR UPDATE`,
    [machineId],
  );
  return res.rows;
}

/** The reducer's state of a stored row (packages/monitor storedAlertState). */
export function rowToState(a: OpenAlertRow): AlertState | undefined {
  return storedAlertState({
    state: a.state,
    category: a.category,
    level: a.level,
    cleared: a.cleared_at !== null,
    shelvedUntilMs: a.shelved_until_ms,
    shelvedBy: a.shelved_by,
  });
}

export interface AlertTarget {
  readonly machineId: number;
  readonly category: 'drift' | 'instrument';
  readonly tagId: number | null;
  readonly severity: AlertSeverityColumn;
}

export interface ConditionContext {
  /** Evidence to store with an activation (the CAUTION text is added). */
  readonly evidence: Record<string, unknown>;
  /** Message of an activation; the CAUTION text is appended. */
  readonly message: string;
  /**
   * Since when the condition of an activation has held [ms] (./condition-since.ts), stored in
   * alerts.condition_since; omitted: the activation's own time.
   */
  readonly conditionSinceMs?: number | undefined;
}

export interface AppliedStep {
  readonly alertId: number | undefined;
  readonly transitions: number;
  /** The open row after the step (undefined once normal). */
  readonly open: OpenAlertRow | undefined;
}

/** Message text with the caution, as stored and sent. */
export function withCaution(message: string): string {
  return `${message} ${CAUTION}`;
}

type Step = ReturnType<typeof stepAlert>;
type Evidence = Record<string, unknown> | undefined;

/** A new alert row for the target in the step's state. */
async function insertAlertRow(
  db: Queryable,
  target: AlertTarget,
  event: AlertEvent,
  s: Step['state'],
  at: number,
  ctx: ConditionContext | undefined,
  evidence: Evidence,
): Promise<OpenAlertRow> {
  const level = event.type === 'activate' ? event.severity : 'warning';
  const ins = await db.query<{ id: number }>(
    `INSERT INTO alerts (machine_id, category, tag_id, level, severity, state, message, evidence, raised_at, updated_at,
                         condition_since)
     VALUES ($1, $2, $3, $4, $5, $6, $7, $8, $9, $9, $10) RETURNING id::int`,
    [
      target.machineId,
      target.category,
      target.tagId,
      level,
      target.severity,
      STATUS_TO_STORED[s.status],
      withCaution(ctx?.message ?? `${target.category} condition active`),
      JSON.stringify(evidence ?? { caution: CAUTION }),
      new Date(at),
      new Date(ctx?.conditionSinceMs ?? at),
    ],
  );
  return {
    id: (ins.rows[0] as { id: number }).id,
    category: target.category,
    tag_id: target.tagId,
    level,
    state: STATUS_TO_STORED[s.status],
    shelved_until_ms: null,
    shelved_by: null,
    cleared_at: null,
    evidence: evidence ?? {},
  };
}

/** The open row moved to the step's state: level and evidence of an activation, the return time of a clear. */
async function updateAlertRow(
  db: Queryable,
  open: OpenAlertRow,
  event: AlertEvent,
  s: Step['state'],
  at: number,
  ctx: ConditionContext | undefined,
  evidence: Evidence,
): Promise<OpenAlertRow> {
  const when = new Date(at);
  const activate = event.type === 'activate';
  const clear = event.type === 'clear';
  const level = activate ? event.severity : open.level;
  const clearedAt = activate ? null : clear ? (open.cleared_at ?? when) : open.cleared_at;
  const newEvidence = activate
    ? (evidence ?? open.evidence)
    : clear
      ? { ...open.evidence, returnedAt: isoSeconds(at), returnedWith: ctx?.evidence ?? null }
      : open.evidence;
  await db.query(
    `UPDATE alerts SET state = $2, level = $3, evidence = $4, cleared_at = $5,
            message = CASE WHEN $6::text IS NULL THEN message ELSE $6 END,
            shelved_until = $7, shelved_by = $8, updated_at = $9,
            condition_since = CASE WHEN $10::timestamptz IS NULL THEN condition_since ELSE $10 END
      WHERE id = $1`,
    [
      open.id,
      STATUS_TO_STORED[s.status],
      level,
      JSON.stringify(newEvidence),
      clearedAt,
      activate && ctx !== undefined ? withCaution(ctx.message) : null,
      s.shelvedUntil === undefined ? null : new Date(s.shelvedUntil),
      s.shelvedBy ?? null,
      when,
      activate ? new Date(ctx?.conditionSinceMs ?? at) : null,
    ],
  );
  return {
    ...open,
    level,
    state: STATUS_TO_STORED[s.status],
    shelved_until_ms: s.shelvedUntil ?? null,
    shelved_by: s.shelvedBy ?? null,
    cleared_at: clearedAt,
    evidence: newEvidence,
  };
}

/** One alert_events row (which enqueues its notifications) and one audit row per transition. */
async function recordTransitions(db: Queryable, id: number, step: Step, evidence: Evidence): Promise<void> {
  for (const t of step.transitions) {
    const ev = await db.query<{ id: number }>(
      `INSERT INTO alert_events (alert_id, time, from_state, to_state, actor, note, data)
       VALUES ($1, $2, $3, $4, 'system', $5, $6) RETURNING id::int`,
      [
        id,
        new Date(t.at),
        STATUS_TO_STORED[t.from],
        STATUS_TO_STORED[t.to],
        t.reason,
        JSON.stringify({ reason: t.reason, evidence: evidence ?? null, caution: CAUTION }),
      ],
    );
    await appendAudit(db, {
      actor: 'system',
      action: 'alert.transition',
      entity: 'alert',
      entityId: id,
      before: { state: STATUS_TO_STORED[t.from] },
      after: { state: STATUS_TO_STORED[t.to], reason: t.reason, eventId: ev.rows[0]?.id ?? null },
    });
  }
}

/**
 * Apply a condition event (activate / clear) or a tick at time `at` [ms] to the target's open
 * alert (or a new one), store the row, its events and the audit rows.
 */
export async function applyAlertEvent(
  db: Queryable,
  target: AlertTarget,
  open: OpenAlertRow | undefined,
  event: AlertEvent,
  at: number,
  ctx: ConditionContext | undefined,
): Promise<AppliedStep> {
  const before = open === undefined ? undefined : rowToState(open);
  if (open !== undefined && before === undefined) return { alertId: open.id, transitions: 0, open };
  const state = before ?? initialAlert(target.category === 'instrument' ? 'instrument-fault' : 'drift');
  const step = stepAlert(state, event, at);
  if (step.rejected !== undefined) return { alertId: open?.id, transitions: 0, open };
  if (event.type === 'tick' && step.transitions.length === 0)
    return { alertId: open?.id, transitions: 0, open };
  if (open === undefined && step.state.status === 'normal')
    return { alertId: undefined, transitions: 0, open: undefined };
  const evidence = ctx === undefined ? undefined : { ...ctx.evidence, caution: CAUTION };
  const row =
    open === undefined
      ? await insertAlertRow(db, target, event, step.state, at, ctx, evidence)
      : await updateAlertRow(db, open, event, step.state, at, ctx, evidence);
  await recordTransitions(db, row.id, step, evidence);
  return {
    alertId: row.id,
    transitions: step.transitions.length,
    open: row.state === 'normal' ? undefined : row,
  };
}
