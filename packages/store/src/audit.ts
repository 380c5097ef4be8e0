/** The audit log: who changed what, when, with the state before and after. */
import type { Queryable } from './errors.js';

export interface AuditEntryInput {
  readonly actor: string;
  /** e.g. "plant.apply", "alert.acknowledge", "token.create". */
  readonly action: string;
  readonly entity: string;
  readonly entityId?: string | number;
  readonly before?: unknown;
  readonly after?: unknown;
}

export interface AuditEntry {
  readonly id: number;
  readonly time: Date;
  readonly actor: string;
  readonly action: string;
  readonly entity: string;
  readonly entityId: string | null;
  readonly before: unknown;
  readonly after: unknown;
}

export async function appendAudit(db: Queryable, entry: AuditEntryInput): Promise<number> {
  const r = await db.query<{ id: string }>(
    `INSERT INTO audit_log (actor, action, entity, entity_id, before, after)
     VALUES ($1, $2, $3, $4, $5::jsonb, $6::jsonb) RETURNING id::text AS id`,
    [
      entry.actor,
      entry.action,
      entry.entity,
      entry.entityId === undefined ? null : String(entry.entityId),
      entry.before === undefined ? null : JSON.stringify(entry.before),
      entry.after === undefined ? null : JSON.stringify(entry.after),
    ],
  );
  return Number(r.rows[0]!.id);
}

/** Newest first. */
export async function readAudit(
  db: Queryable,
  filter: { entity?: string; entityId?: string; limit?: number } = {},
): Promise<AuditEntry[]> {
  const r = await db.query<{
    id: string;
    time: Date;
    actor: string;
    action: string;
    entity: string;
    entity_id: string | null;
    before: unknown;
    after: unknown;
  }>(
    `SELECT id::text AS id, time, actor, action, entity, entity_id, before, after FROM audit_log
      WHERE ($1::text IS NULL OR entity = $1) AND ($2::text IS NULL OR entity_id = $2)
      ORDER BY id DESC LIMIT $3`,
    [filter.entity ?? null, filter.entityId ?? null, filter.limit ?? 100],
  );
  return r.rows.map((x) => ({
    id: Number(x.id),
    time: x.time,
    actor: x.actor,
    action: x.action,
    entity: x.entity,
    entityId: x.entity_id,
    before: x.before,
    after: x.after,
  }));
}
