import { readFile } from 'node:fs/promises';
import { buildApp, createMetricsRegistry, type MountedPlugin } from '@isentrope/api';
import { type PreparedDemo, prepareDemo, startDemoFeed } from '@isentrope/demo';
import { httpPushRoutes, type IngestHealth, sha256Hex, startIngest } from '@isentrope/ingest';
import { backfill, backfillAnalysis, ComputeWorkers, runAlertsOnce, startJobs } from '@isentrope/jobs';
import { type Database, type DatabaseKind, migrate } from '@isentrope/store';
import type pg from 'pg';
import type { Logger } from 'pino';
import { anonymousRoleFor, type Config } from '../config.js';
import { initialAdminAnnouncer } from '../initial-admin.js';
import { Lifecycle } from '../lifecycle.js';
import { createProgress } from '../progress.js';
import { openStartDatabase } from '../start-database.js';

const DAY = 86_400_000;

/**
 * Results for the demo history just written: the last two weeks on the 1-minute grid the live
 * job uses, older history on a 15-minute grid (a year-long trend shows no difference, and the
 * first start stays short); then baselines, drift and the alert states as of now.
 */
async function computeDemoHistory(
  pool: pg.Pool,
  demo: { historyEnd: number; span: { start: number }; createdHistory: boolean },
  log: Logger,
): Promise<void> {
  const end = demo.historyEnd;
  const from = demo.createdHistory ? demo.span.start : end - 7 * DAY;
  const fineFrom = Math.max(from, Math.floor((end - 14 * DAY) / 900_000) * 900_000);
  const progress = createProgress('demo results', log);
  const fineShare = (end - fineFrom) * 15;
  const weight = fineShare + (fineFrom - from);
  // One set of compute threads for both grids: they start and warm up once.
  const workers = new ComputeWorkers();
  try {
    if (fineFrom > from) {
      await backfill(pool, {
        from,
        to: fineFrom,
        gridMs: 900_000,
        workers,
        onProgress: (done, total) =>
          progress.update((total === 0 ? 1 : done / total) * ((fineFrom - from) / weight)),
      });
    }
    await backfill(pool, {
      from: fineFrom,
      to: end,
      advanceWatermark: true,
      workers,
      onProgress: (done, total) =>
        progress.update((fineFrom - from) / weight + (total === 0 ? 1 : done / total) * (fineShare / weight)),
    });
  } finally {
    await workers.close();
  }
  progress.done();
  const analysis = createProgress('demo drift and alerts', log);
  await backfillAnalysis(pool, { nowMs: end });
  analysis.update(0.6);
  await runAlertsOnce(pool, { nowMs: end });
  analysis.done();
}

/** The demo runs when asked, or by default while the database holds no plant but the demo's. */
async function wantDemo(config: Config, pool: pg.Pool): Promise<boolean> {
  if (config.demo !== undefined) return config.demo;
  const sites = await pool.query<{ slug: string }>('SELECT slug FROM sites');
  return sites.rows.every((row) => row.slug === 'harbourside');
}

/** The ingest sources still running at shutdown, with their state and last error. */
function sourcesNotStopped(health: IngestHealth): string {
  return health.sources
    .filter((source) => source.state !== 'stopped')
    .map((s) => `${s.source}: ${s.state}${s.lastError === null ? '' : ` (${s.lastError})`}`)
    .join('; ');
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
  const lifecycle = new Lifecycle(logger, { deadlineMs: config.stopDeadlineMs });
  lifecycle.handleSignals();
  const dbLog = logger.child({ module: 'database' });
  const { db, kind, embedded } = await openStartDatabase(config, (line) => dbLog.debug(line.trim()));
  // Registered first, so stopped last: the server after the pool, both after everything else.
  if (embedded !== undefined)
    lifecycle.add('embedded PostgreSQL', () => embedded.stop(), { evenWhenForced: true });
  lifecycle.add('database pool', () => db.close(), {
    doing: () => `connections in use: ${db.pool.totalCount - db.pool.idleCount}`,
  });
  dbLog.info({ kind, url: db.displayUrl }, `using ${kind} PostgreSQL`);
  try {
    await startParts(config, logger, lifecycle, { db, kind, startedAt });
  } catch (error) {
    // What did start is stopped again, the database last, so a failed start leaves nothing running.
    await lifecycle.shutdown('start failed');
    throw error;
  }
  return lifecycle;
}

/** Migrations, the demo when wanted, ingest, jobs and the API, each registered for the shutdown. */
async function startParts(
  config: Config,
  logger: Logger,
  lifecycle: Lifecycle,
  { db, kind, startedAt }: { db: Database; kind: DatabaseKind; startedAt: number },
): Promise<void> {
  const dbLog = logger.child({ module: 'database' });
  const report = await migrate(db.url, { logger: { info: (message) => dbLog.info(message) } });
  dbLog.info({ applied: report.applied.length }, 'migrations up to date');

  const demoOn = await wantDemo(config, db.pool);
  let demo: PreparedDemo | undefined;
  if (demoOn) {
    const demoLog = logger.child({ module: 'demo' });
    demoLog.info('loading the invented demo plant "Harbourside Energy Centre" (ISENTROPE_DEMO=off to skip)');
    const progress = createProgress('demo history', demoLog);
    demo = await prepareDemo({
      pool: db.pool,
      dataDir: config.dataDir,
      days: config.demoDays,
      onHistoryProgress: (done) => progress.update(done),
    });
    progress.done(`${demo.samplesWritten} samples, ${demo.samplesPacked} packed into blocks`);
    if (demo.samplesWritten > 0) await computeDemoHistory(db.pool, demo, demoLog);
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

  const metrics = createMetricsRegistry();
  const plugins: MountedPlugin[] = [];
  if (config.runIngest) {
    const ingest = await startIngest({
      pool: db.pool,
      databaseUrl: db.url,
      logger,
      dataDir: config.dataDir,
      // The demo's plant file carries its sources; otherwise they come from the sources table.
      ...(demo === undefined ? {} : { plant: demo.plant }),
    });
    lifecycle.add('ingest', () => ingest.stop(), { doing: () => sourcesNotStopped(ingest.health()) });
    metrics.gauge('isentrope_ingest_sources', 'Ingest sources running (1) or not (0), by source', () =>
      ingest.health().sources.map((source) => ({
        labels: { source: source.source, kind: source.kind },
        value: source.state === 'running' || source.state === 'connected' ? 1 : 0,
      })),
    );
    const token = config.ingestToken;
    if (token !== undefined) {
      plugins.push(async (scope) => {
        // The push routes check their own bearer token (ISENTROPE_INGEST_TOKEN), not API sign-in.
        scope.addHook('onRoute', (route) => {
          route.config = { ...route.config, role: 'public' };
        });
        const perMinute = config.ingestRateLimitPerMinute;
        const rateLimit = perMinute === 0 ? false : { max: perMinute, timeWindowMs: 60_000 };
        await scope.register(httpPushRoutes, {
          ...ingest.httpPushOptions(sha256Hex(token)),
          rateLimit,
          prefix: '/api',
        });
      });
    }
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

  // Sign-in is required unless said otherwise; the demo on this machine alone opens read-only.
  const anonymous = anonymousRoleFor(config, demoOn);
  const app = await buildApp({
    pool: db.pool,
    database: { kind, displayUrl: db.displayUrl },
    logger,
    version: await packageVersion(),
    startedAt,
    ...(anonymous === 'none' ? {} : { anonymousRole: anonymous }),
    listenHost: config.host,
    publicHosts: config.publicHosts,
    cookieSecure: config.cookieSecure,
    trustProxy: config.trustProxy,
    metricsToken: config.metricsToken,
    ...(config.adminPassword === undefined ? {} : { adminPassword: config.adminPassword }),
    announceGeneratedAdminPassword: initialAdminAnnouncer(config.dataDir, logger),
    ...(config.energyPrice === undefined ? {} : { energyPrice: config.energyPrice }),
    metrics,
    plugins,
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
}
