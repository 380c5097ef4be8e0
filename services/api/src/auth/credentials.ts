/**
 * API tokens and browser sessions. Both are random secrets handed out once and stored only as
 * SHA-256 hashes in api_tokens; a session is a row with the scope 'session' and an expiry. A token
 * may carry a 'role:<role>' scope that lowers (never raises) its user's role.
 */
import { createHash, randomBytes } from 'node:crypto';
import type pg from 'pg';
import { ApiError } from '../errors.js';
import { hashPassword, verifyPassword } from './passwords.js';
import { hasRole, isRole, type Principal, type Role, roleRank } from './roles.js';

export const TOKEN_PREFIX = 'isk_';
export const SESSION_SCOPE = 'session';
/** Session lifetime [ms]: one long shift (common practice, no source). */
export const SESSION_TTL_MS = 12 * 3_600_000;

export function sha256Hex(secret: string): string {
  return createHash('sha256').update(secret).digest('hex');
}

export function newSecret(prefix = ''): string {
  return `${prefix}${randomBytes(32).toString('base64url')}`;
}

interface CredentialRow {
  id: number;
  user_id: number;
  username: string;
  role: string;
  scopes: string[];
}

/** Look a token or session secret up; undefined when unknown, revoked, expired or its user disabled. */
export async function principalForSecret(
  pool: pg.Pool,
  secret: string,
  kind: 'token' | 'session',
): Promise<Principal | undefined> {
  const { rows } = await pool.query<CredentialRow>(
    `UPDATE api_tokens t SET last_used_at = now()
       FROM users u
      WHERE t.token_hash = $1 AND u.id = t.user_id AND u.disabled_at IS NULL
        AND t.revoked_at IS NULL AND (t.expires_at IS NULL OR t.expires_at > now())
        AND ($2::boolean = ($3 = ANY (t.scopes)))
      RETURNING t.id, t.user_id, u.username, u.role, t.scopes`,
    [sha256Hex(secret), kind === 'session', SESSION_SCOPE],
  );
  const row = rows[0];
  if (row === undefined || !isRole(row.role)) return undefined;
  let role: Role = row.role;
  for (const scope of row.scopes) {
    const r = scope.startsWith('role:') ? scope.slice(5) : undefined;
    if (r !== undefined && isRole(r) && roleRank(r) < roleRank(role)) role = r;
  }
  return {
    kind: kind === 'session' ? 'user' : 'token',
    username: row.username,
    userId: row.user_id,
    role,
    credentialId: row.id,
  };
}

/**
 * Rate limit of every route that checks a password (sign-in, password change), per client:
 * a stricter limit on password guessing (common practice, no source).
 */
export const PASSWORD_CHECK_RATE_LIMIT = { max: 20, timeWindow: 60_000 } as const;

/** Check a username and password; returns the user or throws API_BAD_CREDENTIALS (same error for either mistake). */
export async function checkLogin(
  pool: pg.Pool,
  username: string,
  password: string,
): Promise<{ id: number; username: string; role: Role }> {
  const { rows } = await pool.query<{
    id: number;
    username: string;
    role: string;
    password_hash: string | null;
  }>(`SELECT id, username, role, password_hash FROM users WHERE username = $1 AND disabled_at IS NULL`, [
    username,
  ]);
  const row = rows[0];
  const ok =
    row !== undefined && row.password_hash !== null && (await verifyPassword(password, row.password_hash));
  if (!ok || row === undefined || !isRole(row.role)) throw new ApiError('API_BAD_CREDENTIALS');
  return { id: row.id, username: row.username, role: row.role };
}

/** A new session for a user: returns the secret for the cookie (stored hashed). */
export async function createSession(pool: pg.Pool, userId: number): Promise<string> {
  const secret = newSecret();
  await pool.query(
    `INSERT INTO api_tokens (user_id, name, token_hash, prefix, scopes, expires_at)
     VALUES ($1, 'browser session', $2, '', ARRAY[$3::text], now() + make_interval(secs => $4::float8))`,
    // Expiry by the database clock, the same clock that checks it.
    [userId, sha256Hex(secret), SESSION_SCOPE, SESSION_TTL_MS / 1000],
  );
  return secret;
}

export async function endSession(pool: pg.Pool, secret: string): Promise<void> {
  await pool.query(
    `UPDATE api_tokens SET revoked_at = now() WHERE token_hash = $1 AND $2 = ANY (scopes) AND revoked_at IS NULL`,
    [sha256Hex(secret), SESSION_SCOPE],
  );
}

/** Require a role; 401 when nobody is signed in, 403 when the role is too low. */
export function requireRole(principal: Principal | undefined, need: Role): Principal {
  if (principal === undefined) throw new ApiError('API_UNAUTHENTICATED');
  if (!hasRole(principal.role, need))
    throw new ApiError('API_FORBIDDEN', { required: need, role: principal.role });
  return principal;
}

/**
 * The first administrator, when there is no user at all: password from ISENTROPE_ADMIN_PASSWORD
 * (given by the caller), else a generated one returned so the caller can log it once.
 */
export async function ensureInitialAdmin(
  pool: pg.Pool,
  password: string | undefined,
): Promise<{ created: false } | { created: true; username: string; generatedPassword?: string }> {
  const { rows } = await pool.query<{ n: string }>(`SELECT count(*) AS n FROM users`);
  if (Number(rows[0]?.n ?? 0) > 0) return { created: false };
  const generated = password === undefined || password === '' ? newSecret().slice(0, 20) : undefined;
  const hash = await hashPassword(generated ?? (password as string));
  const inserted = await pool.query(
    `INSERT INTO users (username, display_name, password_hash, role)
     SELECT 'admin', 'Administrator', $1, 'admin' WHERE NOT EXISTS (SELECT 1 FROM users)`,
    [hash],
  );
  if (inserted.rowCount === 0) return { created: false }; // another instance was first
  return generated === undefined
    ? { created: true, username: 'admin' }
    : { created: true, username: 'admin', generatedPassword: generated };
}
