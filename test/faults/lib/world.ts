/**
 * Everything the fault run drives: the cluster, the Isentrope process, the OPC UA server,
 * the folders and the sent log, with one cleanup that runs even when the run fails.
 */
import { chmod, chown, mkdir, mkdtemp, readdir, rm, stat } from 'node:fs/promises';
import { tmpdir, userInfo } from 'node:os';
import { join } from 'node:path';
import pg from 'pg';
import { freePort } from '../../../packages/store/src/embedded.js';
import { type Cluster, createCluster } from './cluster.js';
import { IsentropeProcess, runCli } from './isentrope.js';
import { createUaServer, type UaServer } from './opcua-server.js';
import { BAD_TAGS, CSV_TAGS, OPCUA_TAGS, PUSH_TAGS, writePlantFile } from './plant.js';
import type { Random } from './random.js';
import { SentLog } from './sent.js';

export const PUSH_TOKEN = 'faults-suite-push-token-0123456789abcdef';
export const ADMIN_PASSWORD = 'faults-suite-admin-password-1';

export interface World {
  readonly dir: string;
  readonly cluster: Cluster;
  readonly pool: pg.Pool;
  readonly app: IsentropeProcess;
  readonly ua: UaServer;
  readonly sent: SentLog;
  readonly csvFolder: string;
  readonly badFolder: string;
  readonly bufferDir: string;
  readonly env: Readonly<Record<string, string>>;
  /** When Isentrope first answered /api/health [ms]. */
  readonly firstHealthyAt: number;
  cleanup(): Promise<void>;
}

/** The user Isentrope runs as: nobody when the suite is root (root ignores a read-only folder). */
export function runAsUser(): { uid: number; gid: number } | undefined {
  return userInfo().uid === 0 ? { uid: 65534, gid: 65534 } : undefined;
}

async function ownedFolder(path: string): Promise<string> {
  await mkdir(path, { recursive: true });
  const user = runAsUser();
  if (user !== undefined) await chown(path, user.uid, user.gid);
  return path;
}

export async function createWorld(random: Random, uaPeriodMs: number): Promise<World> {
  const dir = await mkdtemp(join(tmpdir(), 'isentrope-faults-'));
  await chmod(dir, 0o755);
  const cleanups: (() => Promise<unknown>)[] = [() => rm(dir, { recursive: true, force: true })];
  const cleanup = async () => {
    for (const c of cleanups.reverse()) await c().catch(() => undefined);
  };
  try {
    const cluster = await createCluster();
    cleanups.push(() => cluster.destroy());
    const dataDir = await ownedFolder(join(dir, 'data'));
    const csvFolder = await ownedFolder(join(dir, 'drop'));
    const badFolder = await ownedFolder(join(dir, 'bad-drop'));
    const uaPort = await freePort();
    const sent = new SentLog(join(dir, 'sent.jsonl'));
    cleanups.push(() => sent.close());
    const ua = await createUaServer({
      port: uaPort,
      pkiDir: join(dir, 'ua-pki'),
      tags: OPCUA_TAGS,
      periodMs: uaPeriodMs,
      sent,
      value: () => random.value(),
    });
    cleanups.push(() => ua.cut());
    await ua.start();
    const env = {
      DATABASE_URL: cluster.url,
      ISENTROPE_DATA_DIR: dataDir,
      HOME: dataDir,
      HOST: '127.0.0.1',
      ISENTROPE_DEMO: 'off',
      ISENTROPE_INGEST_TOKEN: PUSH_TOKEN,
      ISENTROPE_ADMIN_PASSWORD: ADMIN_PASSWORD,
      LOG_LEVEL: 'info',
      ISENTROPE_STOP_TIMEOUT: '5',
      // The suite plays the TLS proxy in one check (the session cookie's Secure flag behind TLS).
      ISENTROPE_TRUST_PROXY: '127.0.0.1',
    };
    const plantPath = join(dir, 'plant.json');
    await writePlantFile(plantPath, { csvFolder, badFolder, opcuaEndpoint: ua.endpoint });
    for (const args of [['migrate'], ['plant', 'load', plantPath]]) {
      const r = await runCli(args, env);
      if (r.code !== 0) throw new Error(`isentrope ${args.join(' ')} failed (${r.code}):\n${r.output}`);
    }
    const app = new IsentropeProcess({
      env,
      logFile: join(dir, 'isentrope.log'),
      port: await freePort(),
      user: runAsUser(),
    });
    cleanups.push(async () => {
      await app.kill();
      app.close();
    });
    const pool = new pg.Pool({ connectionString: cluster.url, max: 4 });
    pool.on('error', () => {});
    cleanups.push(() => pool.end());
    await app.startUntilHealthy();
    const firstHealthyAt = Date.now();
    return {
      firstHealthyAt,
      dir,
      cluster,
      pool,
      app,
      ua,
      sent,
      csvFolder,
      badFolder,
      bufferDir: join(dataDir, 'buffer', 'plc'),
      env,
      cleanup,
    };
  } catch (error) {
    await cleanup();
    throw error;
  }
}

export const ALL_FAULT_TAGS = [...CSV_TAGS, ...PUSH_TAGS, ...OPCUA_TAGS];
export const ALL_BAD_TAGS = [...BAD_TAGS];

/** CSV files still waiting in a drop folder (not yet moved to processed/ or rejected/). */
export async function waitingFiles(folder: string): Promise<number> {
  const names = await readdir(folder).catch(() => [] as string[]);
  return names.filter((n) => /\.csv$/i.test(n)).length;
}

/** Bytes in the on-disk buffer folder. */
export async function bufferedBytes(dir: string): Promise<number> {
  const names = await readdir(dir).catch(() => [] as string[]);
  let total = 0;
  for (const n of names) total += (await stat(join(dir, n)).catch(() => ({ size: 0 }))).size;
  return total;
}
