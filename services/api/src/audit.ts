import type { Queryable } from '@isentrope/store';
import type { Principal } from './auth/roles.js';

export interface AuditEntry {
  readonly actor: Principal | string;
  /** Verb, e.g. 'alert.acknowledge', 'token.create'. */
  readonly action: string;
  readonly entity: string;
  readonly entityId?: string | number | undefined;
  readonly before?: unknown;
  readonly after?: unknown;
}

function actorName(actor: Principal | string): string {
  if (typeof actor === 'string') return actor;
  return actor.kind === 'token' ? `${actor.username} (token ${actor.credentialId ?? '?'})` : actor.username;
}

/** Append one row to audit_log (who, when, what, before and after); run in the write's own transaction. */
export async function appendAudit(db: Queryable, entry: AuditEntry): Promise<void> {
  await db.query(
    `INSERT INTO audit_log (actor, action, entity, entity_id, before, after) VALUES ($1, $2, $3, $4, $5, $6)`,
    [
      actorName(entry.actor),
      entry.action,
      entry.entity,
      entry.entityId === undefined ? null : String(entry.entityId),
      entry.before === undefined ? null : JSON.stringify(entry.before),
      entry.after === undefined ? null : JSON.stringify(entry.after),
    ],
  );
}

/** One transaction on a pooled client (kept here for the routes that import it from the audit). */
export { inTransaction } from '@isentrope/store';
