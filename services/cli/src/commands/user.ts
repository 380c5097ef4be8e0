import { createInterface } from 'node:readline';
import type { Readable, Writable } from 'node:stream';
import { ApiError, checkNewPassword, MIN_PASSWORD_LENGTH, storeNewPassword } from '@isentrope/api';
import { type Database, openDatabase } from '@isentrope/store';
import type { Config } from '../config.js';

export const USER_USAGE = `Usage: isentrope user password USERNAME
  Sets the password of USERNAME to the first line read from stdin (at least ${MIN_PASSWORD_LENGTH}
  characters) and ends all of that user's browser sessions; audited. For an administrator who
  lost access, on the server, with the same environment as isentrope start:
    printf '%s\\n' 'a-new-long-password' | npx isentrope user password admin
  With the embedded database (no DATABASE_URL), stop isentrope start first: the embedded
  server serves one process at a time.
`;

export interface UserCommandIo {
  readonly stdin: Readable;
  readonly stdout: Writable;
  readonly stderr: Writable;
  /** Ask for the password on stderr first (stdin is a terminal). */
  readonly prompt: boolean;
  /** Who runs the command, as the audit log records it. */
  readonly actor: string;
}

/** Opens the database the command works on; the caller's `close` ends it. */
export type OpenDatabase = () => Promise<Pick<Database, 'pool' | 'close'>>;

/** The configured database (DATABASE_URL, else the embedded one under the data folder). */
export function configuredDatabase(config: Config): OpenDatabase {
  return () =>
    openDatabase({
      url: config.databaseUrl,
      dataDir: config.dataDir,
      embeddedPort: config.embeddedPostgresPort,
    });
}

/** The first line of a stream without its line end (LF or CRLF); undefined when the stream ends first. */
export async function readFirstLine(input: Readable): Promise<string | undefined> {
  const lines = createInterface({ input, crlfDelay: Number.POSITIVE_INFINITY, terminal: false });
  try {
    for await (const line of lines) return line;
    return undefined;
  } finally {
    lines.close();
  }
}

/**
 * `isentrope user password USERNAME`: set a user's password from stdin (echo stays on: on
 * a terminal the password shows as it is typed). Exit 0 when set, 2 for a usage or password
 * problem, 1 when there is no such user.
 */
export async function userCommand(
  args: readonly string[],
  io: UserCommandIo,
  open: OpenDatabase,
): Promise<number> {
  const [action, username, ...extra] = args;
  if (action !== 'password' || username === undefined || extra.length > 0) {
    io.stderr.write(USER_USAGE);
    return 2;
  }
  if (io.prompt)
    io.stderr.write(
      `New password for ${username} (at least ${MIN_PASSWORD_LENGTH} characters; it shows as you type): `,
    );
  const password = await readFirstLine(io.stdin);
  if (password === undefined) {
    io.stderr.write(
      `isentrope: no password on stdin; give it as the first line, e.g. printf '%s\\n' 'a-new-long-password' | npx isentrope user password ${username}\n`,
    );
    return 2;
  }
  try {
    checkNewPassword(password);
  } catch (error) {
    if (!(error instanceof ApiError)) throw error;
    io.stderr.write(`isentrope: ${error.message}\n`);
    return 2;
  }
  const db = await open();
  try {
    const { rows } = await db.pool.query<{ id: number; disabled: boolean }>(
      `SELECT id, disabled_at IS NOT NULL AS disabled FROM users WHERE username = $1`,
      [username],
    );
    const user = rows[0];
    if (user === undefined) {
      const { rows: all } = await db.pool.query<{ username: string }>(
        `SELECT username FROM users ORDER BY username`,
      );
      const names =
        all.length === 0
          ? '(none yet: isentrope start creates admin)'
          : all.map((u) => u.username).join(', ');
      io.stderr.write(`isentrope: no user named "${username}"; the users are: ${names}\n`);
      return 1;
    }
    const { sessionsEnded } = await storeNewPassword(db.pool, {
      userId: user.id,
      newPassword: password,
      actor: io.actor,
      action: 'user.password.reset',
    });
    io.stdout.write(
      `Password of ${username} changed; ${sessionsEnded} browser session${sessionsEnded === 1 ? '' : 's'} ended.\n`,
    );
    if (user.disabled)
      io.stderr.write(
        `isentrope: note: ${username} is disabled (users.disabled_at is set) and cannot sign in while it is.\n`,
      );
    return 0;
  } finally {
    await db.close();
  }
}
