import { PassThrough, Writable } from 'node:stream';
import { type ApiApp, buildApp } from '@isentrope/api';
import { pino } from 'pino';
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { createTestDatabase, type TestDatabase } from '../../../../test/support/database.js';
import { type OpenDatabase, readFirstLine, userCommand } from './user.js';

/** A stream that keeps what is written to it (synchronously, so nothing is pending at return). */
function captured(): { stream: Writable; text: () => string } {
  const chunks: Buffer[] = [];
  const stream = new Writable({
    write(chunk: Buffer, _encoding, done) {
      chunks.push(chunk);
      done();
    },
  });
  return { stream, text: () => Buffer.concat(chunks).toString('utf8') };
}

describe('isentrope user password', () => {
  let db: TestDatabase;
  let app: ApiApp;
  let opened = 0;
  let userId: number;
  // The test database stays open: the command's close only counts.
  const open: OpenDatabase = async () => {
    opened++;
    return { pool: db.pool, close: async () => {} };
  };

  beforeAll(async () => {
    db = await createTestDatabase();
    userId = (
      await db.pool.query<{ id: number }>(
        `INSERT INTO users (username, role) VALUES ('admin', 'admin'), ('eng', 'engineer') RETURNING id`,
      )
    ).rows[0]!.id;
    app = await buildApp({
      pool: db.pool,
      database: { kind: 'external', displayUrl: 'postgres://test' },
      logger: pino({ level: 'silent' }),
      version: '0.0.0-test',
      startedAt: Date.now(),
      rateLimit: false,
    });
    await app.ready();
  });
  afterAll(async () => {
    await app?.close();
    await db?.drop();
  });

  async function run(args: string[], input: string | undefined) {
    const stdin = new PassThrough();
    if (input === undefined) stdin.end();
    else stdin.end(input);
    const stdout = captured();
    const stderr = captured();
    const before = opened;
    const code = await userCommand(
      args,
      { stdin, stdout: stdout.stream, stderr: stderr.stream, prompt: false, actor: 'cli:tester' },
      open,
    );
    return { code, out: stdout.text(), err: stderr.text(), opened: opened - before };
  }

  async function login(username: string, password: string) {
    const r = await app.inject({ method: 'POST', url: '/api/auth/login', payload: { username, password } });
    return { status: r.statusCode, cookie: String(r.headers['set-cookie'] ?? '').split(';')[0]! };
  }

  it('sets the password from the first line of stdin; the old one fails, sessions end; audited', async () => {
    const first = await run(['password', 'admin'], 'first-password-1\r\nignored second line\n');
    expect(first).toMatchObject({ code: 0, err: '', opened: 1 });
    expect(first.out).toBe('Password of admin changed; 0 browser sessions ended.\n');
    const session = await login('admin', 'first-password-1');
    expect(session.status).toBe(200);

    const second = await run(['password', 'admin'], 'second-password-2');
    expect(second.code).toBe(0);
    expect(second.out).toBe('Password of admin changed; 1 browser session ended.\n');
    expect((await login('admin', 'first-password-1')).status).toBe(401);
    expect((await login('admin', 'second-password-2')).status).toBe(200);
    const me = await app.inject({ method: 'GET', url: '/api/auth/me', headers: { cookie: session.cookie } });
    expect(me.statusCode).toBe(401);
    const { rows } = await db.pool.query<{ actor: string; after: unknown }>(
      `SELECT actor, after FROM audit_log WHERE action = 'user.password.reset' AND entity_id = $1 ORDER BY id`,
      [String(userId)],
    );
    expect(rows).toEqual([
      { actor: 'cli:tester', after: { sessionsEnded: 0 } },
      { actor: 'cli:tester', after: { sessionsEnded: 1 } },
    ]);
  });

  it('refuses a short password before it opens the database (exit 2)', async () => {
    const r = await run(['password', 'admin'], 'short\n');
    expect(r.code).toBe(2);
    expect(r.opened).toBe(0);
    expect(r.err).toBe(
      'isentrope: The new password is too short (length 5); choose one of at least 12 characters.\n',
    );
    expect((await login('admin', 'second-password-2')).status).toBe(200);
  });

  it('says so when stdin holds no line, or the user does not exist', async () => {
    const empty = await run(['password', 'admin'], undefined);
    expect(empty.code).toBe(2);
    expect(empty.err).toMatch(/^isentrope: no password on stdin; give it as the first line/);
    const nobody = await run(['password', 'root'], 'a-long-enough-password\n');
    expect(nobody.code).toBe(1);
    expect(nobody.err).toBe('isentrope: no user named "root"; the users are: admin, eng\n');
  });

  it('prints its usage for anything else (exit 2)', async () => {
    for (const args of [[], ['password'], ['list'], ['password', 'admin', 'extra']]) {
      const r = await run(args, 'a-long-enough-password\n');
      expect(r.code, args.join(' ')).toBe(2);
      expect(r.err).toMatch(/^Usage: isentrope user password USERNAME/);
      expect(r.opened).toBe(0);
    }
  });

  it('reads one line without its end: LF, CRLF, or none at the end of input', async () => {
    const line = async (text: string) => {
      const s = new PassThrough();
      s.end(text);
      return readFirstLine(s);
    };
    expect(await line('a b\n')).toBe('a b');
    expect(await line('pw\r\nnext')).toBe('pw');
    expect(await line('no end')).toBe('no end');
    expect(await line('')).toBeUndefined();
  });
});
