/**
 * The suite's own PostgreSQL 15 cluster in a temporary folder, on a free port, which the
 * suite stops (immediate: like a crash) and starts again. initdb and pg_ctl refuse root, so
 * they run as the postgres user.
 */
import { execFile } from 'node:child_process';
import { chmod, chown, mkdtemp, rm } from 'node:fs/promises';
import { tmpdir, userInfo } from 'node:os';
import { join } from 'node:path';
import { promisify } from 'node:util';
import { freePort } from '../../../packages/store/src/embedded.js';

const run = promisify(execFile);
const BIN = '/usr/lib/postgresql/15/bin';

export interface Cluster {
  readonly url: string;
  readonly port: number;
  readonly dir: string;
  running: boolean;
  start(): Promise<void>;
  /** pg_ctl stop -m immediate: every backend is cut off, as in a crash. */
  stopImmediate(): Promise<void>;
  /** Stops and deletes the folder; safe to call twice. */
  destroy(): Promise<void>;
}

async function asPostgres(command: string, args: readonly string[]): Promise<string> {
  const asRoot = userInfo().uid === 0;
  const { stdout } = asRoot
    ? await run('runuser', ['-u', 'postgres', '--', join(BIN, command), ...args], { timeout: 120_000 })
    : await run(join(BIN, command), [...args], { timeout: 120_000 });
  return stdout;
}

async function postgresIds(): Promise<{ uid: number; gid: number }> {
  const { stdout } = await run('id', ['-u', 'postgres']);
  const { stdout: g } = await run('id', ['-g', 'postgres']);
  return { uid: Number(stdout.trim()), gid: Number(g.trim()) };
}

export async function createCluster(): Promise<Cluster> {
  const dir = await mkdtemp(join(tmpdir(), 'isentrope-faults-pg-'));
  const data = join(dir, 'data');
  if (userInfo().uid === 0) {
    const ids = await postgresIds();
    await chown(dir, ids.uid, ids.gid);
  }
  await chmod(dir, 0o755);
  await asPostgres('initdb', ['-D', data, '-U', 'postgres', '--auth=trust', '-E', 'UTF8', '--no-sync']);
  const port = await freePort();
  const options = `-p ${port} -k ${dir} -c listen_addresses=127.0.0.1 -c max_connections=200`;
  const cluster: Cluster = {
    url: `postgres://postgres@127.0.0.1:${port}/postgres`,
    port,
    dir,
    running: false,
    async start() {
      await asPostgres('pg_ctl', [
        '-D',
        data,
        '-o',
        options,
        '-l',
        join(dir, 'server.log'),
        '-w',
        '-t',
        '60',
        'start',
      ]);
      cluster.running = true;
    },
    async stopImmediate() {
      await asPostgres('pg_ctl', ['-D', data, '-m', 'immediate', '-w', 'stop']);
      cluster.running = false;
    },
    async destroy() {
      await asPostgres('pg_ctl', ['-D', data, '-m', 'immediate', '-w', 'stop']).catch(() => undefined);
      cluster.running = false;
      await rm(dir, { recursive: true, force: true });
    },
  };
  await cluster.start();
  return cluster;
}
