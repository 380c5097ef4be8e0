import { readFile } from 'node:fs/promises';
import { buildApp } from '@isentrope/api';
import { prepareDemo, startDemoFeed } from '@isentrope/demo';
import { startJobs } from '@isentrope/jobs';
import { migrate, openDatabase } from '@isentrope/store';
import type pg from 'pg';
import type { Logger } from 'pino';
import type { Config } from '../config.js';
import { Lifecycle } from '../lifecycle.js';
import { createProgress } from '../progress.js';

/** The demo runs when asked, or by default while the database holds no plant but the demo's. */
async function wantDemo(config: Config, pool: pg.Pool): Promise<boolean> {
  if (config.demo !== undefined) return config.demo;
  const sites = await pool.query<{ slug: string }>('SELECT slug FROM sites');
  return sites.rows.every((row) => row.slug === 'harbourside');
}

async function packageVersion(): Promise<string> {
  const text = await readFile(new URL('../../../../package.json', import.meta.url), 'utf8');
  const parsed: unknown = JSON.parse(text);
  return typeof parsed === 'object' && parsed !== null && 'version' in parsed
    ? String(parsed.version)
    : 'unknown';
}

/** `isentrope start`: database, migrations, API (and, as they exist, ingest and jobs) in one process. */
export async function startCommand(config: Config, logger: Logger): Promise<Lifecycle> {
  const startedAt = Date.now();
  const lifecycle = new Lifecycle(logger);
  lifecycle.handleSignals();
  const dbLog = logger.child({ module: 'database' });
  const db = await openDatabase({
    url: config.databaseUrl,
    dataDir: config.dataDir,
    embeddedPort: config.embeddedPostgresPort,
    onEmbeddedLog: (line) => dbLog.debug(line.trim()),
  });
  lifecycle.add('database', () => db.close());
  dbLog.info({ kind: db.kind, url: db.displayUrl }, `using ${db.kind} PostgreSQL`);

  try {
    const report = await migrate(db.url, { logger: { info: (message) => dbLog.info(message) } });
    dbLog.info({ applied: report.applied.length }, 'migrations up to date');
  } catch (error) {
    await lifecycle.shutdown('migration failed');
    throw error;
  }

  if (await wantDemo(config, db.pool)) {
    const demoLog = logger.child({ module: 'demo' });
    demoLog.info('loading the invented demo plant "Harbourside Energy Centre" (ISENTROPE_DEMO=off to skip)');
    const progress = createProgress('demo history', demoLog);
    const demo = await prepareDemo({
      pool: db.pool,
      dataDir: config.dataDir,
      days: config.demoDays,
      onHistoryProgress: (done) => progress.update(done),
    });
    progress.done(`${demo.samplesWritten} samples`);
    const feed = await startDemoFeed(demo, {
      dataDir: config.dataDir,
      pool: db.pool,
      onError: (error) => demoLog.error({ err: error }, 'demo live feed failed a step'),
    });
    lifecycle.add('demo feed', () => feed.stop());
    demoLog.info(
      { opcua: demo.opcuaEndpoint, drop: demo.dropFolder, plantFile: `${config.dataDir}/demo/plant.yaml` },
      'demo plant live: OPC UA simulator and CSV drops running',
    );
  }

  if (config.runJobs) {
    const jobs = await startJobs({
      pool: db.pool,
      databaseUrl: db.url,
      logger,
      config: {
        ...(config.webhook === undefined
          ? {}
          : {
              webhookUrl: config.webhook.url,
              ...(config.webhook.secret === undefined ? {} : { webhookSecret: config.webhook.secret }),
            }),
        ...(config.smtp === undefined ? {} : { smtp: config.smtp }),
        monthly: config.energyPrice === undefined ? {} : { price: config.energyPrice },
      },
    });
    lifecycle.add('jobs', () => jobs.stop());
  }

  const app = await buildApp({
    pool: db.pool,
    database: { kind: db.kind, displayUrl: db.displayUrl },
    logger,
    version: await packageVersion(),
    startedAt,
  });
  lifecycle.add('http', () => app.close());
  await app.listen({ host: config.host, port: config.port });
  const address = app.server.address();
  const port = typeof address === 'object' && address !== null ? address.port : config.port;
  const shownHost = config.host === '0.0.0.0' ? 'localhost' : config.host;
  logger.info(
    { url: `http://${shownHost}:${port}/` },
    `Isentrope is running: open http://${shownHost}:${port}/`,
  );
  return lifecycle;
}
