import { open, rm, stat } from 'node:fs/promises';
import { join } from 'node:path';
import type { Logger } from 'pino';

/** Name of the file, in the data directory, that keeps a generated first-admin password. */
export const INITIAL_ADMIN_PASSWORD_FILE = 'initial-admin-password';

/** The file's text: the password alone on the first line (for `head -n 1`), then what to do with it. */
export function initialAdminPasswordText(username: string, password: string, createdAt: Date): string {
  return (
    `${password}\n\n` +
    `The password of the Isentrope user "${username}", generated at the first start (${createdAt.toISOString()}).\n` +
    `Sign in with it and change it, then delete this file: Isentrope never reads it and never writes it again.\n`
  );
}

/**
 * Writes <dataDir>/initial-admin-password, readable by this user only (mode 0600); an older file
 * (from a database since replaced) is removed first, so the mode is always set by this write.
 * Returns the file's path.
 */
export async function writeInitialAdminPassword(
  dataDir: string,
  username: string,
  password: string,
  createdAt: Date,
): Promise<string> {
  const path = join(dataDir, INITIAL_ADMIN_PASSWORD_FILE);
  await rm(path, { force: true });
  const file = await open(path, 'wx', 0o600);
  try {
    await file.writeFile(initialAdminPasswordText(username, password, createdAt));
  } finally {
    await file.close();
  }
  return path;
}

async function isDirectory(path: string): Promise<boolean> {
  try {
    return (await stat(path)).isDirectory();
  } catch {
    return false;
  }
}

/**
 * Tells the operator the first admin's generated password, once (when the user is created): in
 * the log and, for those who never see the log (nohup, a service manager), in a file in the data
 * directory. Without a data directory (DATABASE_URL and no ISENTROPE_DATA_DIR folder) the log
 * line is the only place, as it says. Never throws: the password exists nowhere else.
 */
export function initialAdminAnnouncer(
  dataDir: string,
  logger: Logger,
  now: () => Date = () => new Date(),
): (admin: { readonly username: string; readonly password: string }) => Promise<void> {
  return async ({ username, password }) => {
    const created = `first start: created the user "${username}" with a generated password`;
    if (!(await isDirectory(dataDir))) {
      logger.warn(
        { username, password, dataDir },
        `${created}, shown once, in this log line only (no data directory ${dataDir}, so no file); sign in and change it, or set ISENTROPE_ADMIN_PASSWORD before a first start`,
      );
      return;
    }
    try {
      const file = await writeInitialAdminPassword(dataDir, username, password, now());
      logger.warn(
        { username, password, file },
        `${created}, shown once here and kept in ${file} (readable by this user only); sign in, change it and delete the file`,
      );
    } catch (error) {
      logger.warn(
        { username, password, err: error },
        `${created}, shown once, in this log line only (could not write ${join(dataDir, INITIAL_ADMIN_PASSWORD_FILE)}); sign in and change it`,
      );
    }
  };
}
