/**
 * Changing a password: the rule a new password must meet, the check of the current one, and the
 * store of the new hash together with the end of the user's sessions and the audit entry, in one
 * transaction. Used by the API (own change, admin reset) and by `isentrope user password`.
 */
import type pg from 'pg';
import { type AuditEntry, appendAudit, inTransaction } from '../audit.js';
import { ApiError } from '../errors.js';
import { SESSION_SCOPE } from './credentials.js';
import { hashPassword, verifyPassword } from './passwords.js';

/** Least length of a new password [characters]; the same as ISENTROPE_ADMIN_PASSWORD's. */
export const MIN_PASSWORD_LENGTH = 12;

/**
 * Refuse a new password shorter than MIN_PASSWORD_LENGTH characters (Unicode code points, so an
 * accented letter counts once), or equal to the current one when that is known.
 */
export function checkNewPassword(newPassword: string, currentPassword?: string): void {
  const length = [...newPassword].length;
  if (length < MIN_PASSWORD_LENGTH)
    throw new ApiError('API_PASSWORD_TOO_SHORT', { length, min: MIN_PASSWORD_LENGTH });
  if (currentPassword !== undefined && newPassword === currentPassword)
    throw new ApiError('API_PASSWORD_UNCHANGED');
}

/**
 * The stored hash of a user's password when `password` matches it; API_BAD_CURRENT_PASSWORD
 * otherwise (also for a user without a password).
 */
export async function checkCurrentPassword(pool: pg.Pool, userId: number, password: string): Promise<string> {
  const { rows } = await pool.query<{ password_hash: string | null }>(
    `SELECT password_hash FROM users WHERE id = $1`,
    [userId],
  );
  const stored = rows[0]?.password_hash ?? null;
  if (stored === null || !(await verifyPassword(password, stored)))
    throw new ApiError('API_BAD_CURRENT_PASSWORD');
  return stored;
}

export interface NewPassword {
  readonly userId: number;
  readonly newPassword: string;
  /**
   * The hash the change was checked against: when another change came first, this one is refused
   * with API_BAD_CURRENT_PASSWORD rather than overwriting it. Absent for a reset.
   */
  readonly expectedHash?: string | undefined;
  /** The caller's own session (api_tokens id), kept; every other session of the user ends. */
  readonly keepSessionId?: number | undefined;
  readonly actor: AuditEntry['actor'];
  readonly action: 'user.password.change' | 'user.password.reset';
}

/** Store a new password (scrypt), end the user's other sessions and audit it; returns how many sessions ended. */
export async function storeNewPassword(
  pool: pg.Pool,
  change: NewPassword,
): Promise<{ sessionsEnded: number }> {
  const hash = await hashPassword(change.newPassword);
  return inTransaction(pool, async (client) => {
    const updated = await client.query(
      `UPDATE users SET password_hash = $2 WHERE id = $1 AND ($3::text IS NULL OR password_hash = $3)`,
      [change.userId, hash, change.expectedHash ?? null],
    );
    if (updated.rowCount === 0) {
      if (change.expectedHash !== undefined) throw new ApiError('API_BAD_CURRENT_PASSWORD');
      throw new ApiError('API_NOT_FOUND', { entity: 'user', id: change.userId });
    }
    const ended = await client.query(
      `UPDATE api_tokens SET revoked_at = now()
        WHERE user_id = $1 AND $2 = ANY (scopes) AND revoked_at IS NULL AND id IS DISTINCT FROM $3::integer`,
      [change.userId, SESSION_SCOPE, change.keepSessionId ?? null],
    );
    const sessionsEnded = ended.rowCount ?? 0;
    // Never the password or its hash: only that it changed and what it ended.
    await appendAudit(client, {
      actor: change.actor,
      action: change.action,
      entity: 'user',
      entityId: change.userId,
      after: { sessionsEnded },
    });
    return { sessionsEnded };
  });
}
