import { chmod, mkdir, mkdtemp, rm, writeFile } from 'node:fs/promises';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import { afterAll, describe, expect, it } from 'vitest';
import { blockedFolder, EmbeddedAccessError, EmbeddedInUseError, startEmbeddedPostgres } from './embedded.js';

describe('blockedFolder (can the postgres user reach a path?)', () => {
  const made: string[] = [];
  afterAll(async () => {
    for (const dir of made) await rm(dir, { recursive: true, force: true });
  });

  it('names the first folder others may not enter', async () => {
    const top = await mkdtemp(join(tmpdir(), 'isentrope-access-'));
    made.push(top);
    await chmod(top, 0o700);
    await mkdir(join(top, 'repo', 'data'), { recursive: true });
    expect(await blockedFolder(join(top, 'repo', 'data'))).toBe(top);
    await chmod(top, 0o755);
    expect(await blockedFolder(join(top, 'repo', 'data'))).toBeUndefined();
  });

  it('stops at the first folder that does not exist yet', async () => {
    const top = await mkdtemp(join(tmpdir(), 'isentrope-access-'));
    made.push(top);
    await chmod(top, 0o755);
    expect(await blockedFolder(join(top, 'not', 'yet'))).toBeUndefined();
  });

  it('says what to do in its error', () => {
    const error = new EmbeddedAccessError('/root', 'the PostgreSQL programs');
    expect(error.code).toBe('STORE_EMBEDDED_ACCESS');
    expect(error.message).toContain('may not enter /root');
    expect(error.message).toContain('DATABASE_URL');
  });
});

describe('startEmbeddedPostgres on a data folder whose server already runs', () => {
  let top: string | undefined;
  afterAll(async () => {
    if (top !== undefined) await rm(top, { recursive: true, force: true });
  });

  it('refuses at once with EmbeddedInUseError naming the folder and the process', async () => {
    top = await mkdtemp(join(tmpdir(), 'isentrope-inuse-'));
    await chmod(top, 0o755);
    const cluster = join(top, 'postgres');
    await mkdir(cluster, { recursive: true });
    // A cluster that exists, and a lock file naming a live process (this test's own).
    await writeFile(join(cluster, 'PG_VERSION'), '15\n');
    await writeFile(join(cluster, 'postmaster.pid'), `${process.pid}\n${cluster}\n`);
    const error = await startEmbeddedPostgres({ dataDir: top }).catch((e: unknown) => e);
    expect(error).toBeInstanceOf(EmbeddedInUseError);
    expect((error as EmbeddedInUseError).pid).toBe(process.pid);
    expect((error as Error).message).toContain(cluster);
    expect((error as Error).message).toContain('DATABASE_URL');
  });
});
