import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { createTestDatabase, type TestDatabase } from '../../../test/support/database.js';
import type { ApiApp } from './app.js';
import { buildTestApp } from './test-support/app.js';
import { createToken, createUser } from './test-support/seed.js';

describe('password change and reset', () => {
  let db: TestDatabase;
  let app: ApiApp;
  let adminToken: string;
  let viewerToken: string;
  let viewerId: number;
  let engineerId: number;

  beforeAll(async () => {
    db = await createTestDatabase();
    adminToken = await createToken(db.pool, await createUser(db.pool, 'admin1', 'admin', 'admin-password-1'));
    viewerId = await createUser(db.pool, 'viewer1', 'viewer', 'viewer-password-1');
    viewerToken = await createToken(db.pool, viewerId);
    engineerId = await createUser(db.pool, 'eng1', 'engineer', 'engineer-password-1');
    app = await buildTestApp(db.pool, { rateLimit: false });
  });
  afterAll(async () => {
    await app?.close();
    await db?.drop();
  });

  /** Sign in; the session cookie, or the refusal's status. */
  async function login(username: string, password: string): Promise<{ status: number; cookie: string }> {
    const r = await app.inject({ method: 'POST', url: '/api/auth/login', payload: { username, password } });
    return { status: r.statusCode, cookie: String(r.headers['set-cookie'] ?? '').split(';')[0]! };
  }

  type Answer = { code?: string; detail?: string; sessionsEnded?: number };
  const admin = () => ({ authorization: `Bearer ${adminToken}` });

  /** POST /api/auth/password as a session (its cookie) or with other headers (a token, nothing). */
  async function change(
    caller: string | Record<string, string>,
    currentPassword: string,
    newPassword: string,
  ) {
    const r = await app.inject({
      method: 'POST',
      url: '/api/auth/password',
      headers: typeof caller === 'string' ? { cookie: caller } : caller,
      payload: { currentPassword, newPassword },
    });
    return { status: r.statusCode, type: String(r.headers['content-type']), body: r.json<Answer>() };
  }

  /** PUT /api/users/:id/password. */
  async function reset(headers: Record<string, string>, userId: number, newPassword: string) {
    const r = await app.inject({
      method: 'PUT',
      url: `/api/users/${userId}/password`,
      headers,
      payload: { newPassword },
    });
    return { status: r.statusCode, body: r.json<Answer>() };
  }

  async function signedIn(cookie: string): Promise<boolean> {
    const r = await app.inject({ method: 'GET', url: '/api/auth/me', headers: { cookie } });
    return r.statusCode === 200;
  }

  async function audit(action: string, userId: number) {
    const { rows } = await db.pool.query<{ actor: string; after: { sessionsEnded: number } }>(
      `SELECT actor, after FROM audit_log WHERE action = $1 AND entity = 'user' AND entity_id = $2 ORDER BY id`,
      [action, String(userId)],
    );
    return rows;
  }

  it('refuses a wrong current password with 403 API_BAD_CURRENT_PASSWORD, as problem+json', async () => {
    const { cookie } = await login('eng1', 'engineer-password-1');
    const r = await change(cookie, 'not-my-password', 'a-long-new-password');
    expect(r.status).toBe(403);
    expect(r.type).toMatch(/^application\/problem\+json/);
    expect(r.body.code).toBe('API_BAD_CURRENT_PASSWORD');
    expect(r.body.detail).toContain('type the password you sign in with');
    // Nothing changed: the old password still signs in, and the session is still valid.
    expect((await login('eng1', 'engineer-password-1')).status).toBe(200);
    expect(await signedIn(cookie)).toBe(true);
  });

  it('refuses a new password under 12 characters (400 API_PASSWORD_TOO_SHORT) and one equal to the current', async () => {
    const { cookie } = await login('eng1', 'engineer-password-1');
    const short = await change(cookie, 'engineer-password-1', 'elevenchars');
    expect(short.status).toBe(400);
    expect(short.body.code).toBe('API_PASSWORD_TOO_SHORT');
    expect(short.body.detail).toBe(
      'The new password is too short (length 11); choose one of at least 12 characters.',
    );
    // Characters, not UTF-16 units: 11 letters with two outside the BMP are still 11.
    const astral = await change(cookie, 'engineer-password-1', 'ab𝛈𝛈cdefghi');
    expect(astral.body.code).toBe('API_PASSWORD_TOO_SHORT');
    const same = await change(cookie, 'engineer-password-1', 'engineer-password-1');
    expect(same.status).toBe(400);
    expect(same.body.code).toBe('API_PASSWORD_UNCHANGED');
    expect((await login('eng1', 'engineer-password-1')).status).toBe(200);
  });

  it('changes the password: the old one fails, the new one works, other sessions end, this one stays; audited', async () => {
    const mine = await login('eng1', 'engineer-password-1');
    const other = await login('eng1', 'engineer-password-1');
    const ended = (
      await db.pool.query<{ n: string }>(
        `SELECT count(*) AS n FROM api_tokens WHERE user_id = $1 AND 'session' = ANY (scopes) AND revoked_at IS NULL`,
        [engineerId],
      )
    ).rows[0]!.n;
    // An API token of the user is no session: it stays valid.
    const token = await createToken(db.pool, engineerId, 'script');
    const r = await change(mine.cookie, 'engineer-password-1', 'twelve-chars');
    expect(r.status).toBe(200);
    // Every open session of the user but the caller's (the earlier tests left some open).
    expect(r.body.sessionsEnded).toBe(Number(ended) - 1);
    expect(r.body.sessionsEnded).toBeGreaterThanOrEqual(1);
    expect((await login('eng1', 'engineer-password-1')).status).toBe(401);
    expect((await login('eng1', 'twelve-chars')).status).toBe(200);
    expect(await signedIn(mine.cookie)).toBe(true);
    expect(await signedIn(other.cookie)).toBe(false);
    const byToken = await app.inject({
      method: 'GET',
      url: '/api/auth/me',
      headers: { authorization: `Bearer ${token}` },
    });
    expect(byToken.statusCode).toBe(200);
    const entries = await audit('user.password.change', engineerId);
    expect(entries).toHaveLength(1);
    expect(entries[0]).toEqual({ actor: 'eng1', after: { sessionsEnded: r.body.sessionsEnded } });
    // The stored form is a scrypt hash, never the password.
    const { rows } = await db.pool.query<{ password_hash: string }>(
      `SELECT password_hash FROM users WHERE id = $1`,
      [engineerId],
    );
    expect(rows[0]!.password_hash).toMatch(/^scrypt\$32768\$8\$1\$/);
    expect(rows[0]!.password_hash).not.toContain('twelve-chars');
  });

  it('lets a token of a user change that user password; anonymous callers are refused', async () => {
    const session = await login('viewer1', 'viewer-password-1');
    const r = await change(
      { authorization: `Bearer ${viewerToken}` },
      'viewer-password-1',
      'viewer-password-2',
    );
    expect(r.status).toBe(200);
    // No session is the caller's here: all of them end.
    expect(r.body.sessionsEnded).toBe(1);
    expect(await signedIn(session.cookie)).toBe(false);
    const nobody = await change({}, 'viewer-password-2', 'viewer-password-3');
    expect(nobody.status).toBe(401);
    expect(nobody.body.code).toBe('API_UNAUTHENTICATED');
  });

  it("an admin resets another user's password, ending all of that user's sessions; audited", async () => {
    const a = await login('eng1', 'twelve-chars');
    const b = await login('eng1', 'twelve-chars');
    const r = await reset(admin(), engineerId, 'set-by-the-admin');
    expect(r.status).toBe(200);
    expect(r.body.sessionsEnded).toBeGreaterThanOrEqual(2);
    expect(await signedIn(a.cookie)).toBe(false);
    expect(await signedIn(b.cookie)).toBe(false);
    expect((await login('eng1', 'twelve-chars')).status).toBe(401);
    expect((await login('eng1', 'set-by-the-admin')).status).toBe(200);
    const entries = await audit('user.password.reset', engineerId);
    expect(entries).toHaveLength(1);
    expect(entries[0]!.actor).toMatch(/^admin1 \(token \d+\)$/);
    const short = await reset(admin(), engineerId, 'short');
    expect(short.status).toBe(400);
    expect(short.body.code).toBe('API_PASSWORD_TOO_SHORT');
    const missing = await reset(admin(), 999_999, 'a-long-new-password');
    expect(missing.status).toBe(404);
    expect(missing.body.code).toBe('API_NOT_FOUND');
  });

  it("a user who is not an admin cannot reset another user's password (403)", async () => {
    const r = await reset({ authorization: `Bearer ${viewerToken}` }, engineerId, 'taken-over-by-viewer');
    expect(r.status).toBe(403);
    expect(r.body.code).toBe('API_FORBIDDEN');
    const eng = await login('eng1', 'set-by-the-admin');
    const byEngineer = await reset({ cookie: eng.cookie }, viewerId, 'taken-over-by-engineer');
    expect(byEngineer.status).toBe(403);
    expect(byEngineer.body.code).toBe('API_FORBIDDEN');
    expect((await login('viewer1', 'viewer-password-2')).status).toBe(200);
    expect((await login('eng1', 'taken-over-by-viewer')).status).toBe(401);
  });

  it('limits password checks like sign-in: 20 a minute per client, the 21st gets 429', async () => {
    // A fresh app with the default limits (the one above runs without, so its many sign-ins pass).
    const limited = await buildTestApp(db.pool);
    try {
      const r = await limited.inject({
        method: 'POST',
        url: '/api/auth/login',
        payload: { username: 'admin1', password: 'admin-password-1' },
      });
      const cookie = String(r.headers['set-cookie']).split(';')[0]!;
      const codes: number[] = [];
      for (let i = 0; i < 21; i++) {
        const c = await limited.inject({
          method: 'POST',
          url: '/api/auth/password',
          headers: { cookie },
          // Too short: refused before any hashing, so the loop costs no scrypt time.
          payload: { currentPassword: 'admin-password-1', newPassword: 'short' },
        });
        codes.push(c.statusCode);
      }
      expect(codes.slice(0, 20)).toEqual(Array.from({ length: 20 }, () => 400));
      expect(codes[20]).toBe(429);
    } finally {
      await limited.close();
    }
  });
});
