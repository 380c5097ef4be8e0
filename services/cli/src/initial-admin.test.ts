import { mkdir, mkdtemp, readFile, rm, stat, writeFile } from 'node:fs/promises';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import pino from 'pino';
import { afterEach, beforeEach, describe, expect, it } from 'vitest';
import { INITIAL_ADMIN_PASSWORD_FILE, initialAdminAnnouncer } from './initial-admin.js';

interface Line {
  level: number;
  msg: string;
  password?: string;
  file?: string;
}

function capture(): { logger: pino.Logger; lines: Line[] } {
  const lines: Line[] = [];
  const logger = pino({ level: 'info' }, { write: (text: string) => lines.push(JSON.parse(text) as Line) });
  return { logger, lines };
}

const WHEN = new Date(Date.UTC(2026, 0, 5, 7, 30));

describe('initialAdminAnnouncer', () => {
  let folder: string;
  beforeEach(async () => {
    folder = await mkdtemp(join(tmpdir(), 'isentrope-admin-'));
  });
  afterEach(async () => {
    await rm(folder, { recursive: true, force: true });
  });

  it('writes the password to <dataDir>/initial-admin-password, mode 0600, and names the file in the log line', async () => {
    const { logger, lines } = capture();
    await initialAdminAnnouncer(
      folder,
      logger,
      () => WHEN,
    )({ username: 'admin', password: 'Xy7-generated-pw' });
    const path = join(folder, INITIAL_ADMIN_PASSWORD_FILE);
    const text = await readFile(path, 'utf8');
    expect(text.split('\n')[0]).toBe('Xy7-generated-pw');
    expect(text).toContain('generated at the first start (2026-01-05T07:30:00.000Z)');
    expect(text).toContain('change it, then delete this file');
    expect((await stat(path)).mode & 0o777).toBe(0o600);
    expect(lines).toHaveLength(1);
    expect(lines[0]).toMatchObject({ level: 40, password: 'Xy7-generated-pw', file: path });
    expect(lines[0]?.msg).toContain(`kept in ${path}`);
  });

  it('replaces a file left from an older database, with mode 0600 again', async () => {
    const path = join(folder, INITIAL_ADMIN_PASSWORD_FILE);
    await writeFile(path, 'old-password\n', { mode: 0o644 });
    const { logger } = capture();
    await initialAdminAnnouncer(
      folder,
      logger,
      () => WHEN,
    )({ username: 'admin', password: 'new-password-1' });
    expect((await readFile(path, 'utf8')).split('\n')[0]).toBe('new-password-1');
    expect((await stat(path)).mode & 0o777).toBe(0o600);
  });

  it('without a data directory (DATABASE_URL only) logs the password alone and says there is no file', async () => {
    const { logger, lines } = capture();
    const missing = join(folder, 'no-such-folder');
    await initialAdminAnnouncer(missing, logger)({ username: 'admin', password: 'only-in-the-log' });
    expect(lines).toHaveLength(1);
    expect(lines[0]).toMatchObject({ level: 40, password: 'only-in-the-log' });
    expect(lines[0]?.file).toBeUndefined();
    expect(lines[0]?.msg).toContain(`in this log line only (no data directory ${missing}, so no file)`);
  });

  it('still logs the password when the file cannot be written, and does not throw', async () => {
    // A folder where the file should be: the write fails whoever runs the test (root included).
    await mkdir(join(folder, INITIAL_ADMIN_PASSWORD_FILE, 'blocker'), { recursive: true });
    const { logger, lines } = capture();
    await initialAdminAnnouncer(folder, logger)({ username: 'admin', password: 'still-shown-once' });
    expect(lines).toHaveLength(1);
    expect(lines[0]).toMatchObject({ level: 40, password: 'still-shown-once' });
    expect(lines[0]?.msg).toContain('in this log line only (could not write');
  });
});
