import { createRequire } from 'node:module';
import { dirname, join } from 'node:path';
import { fileURLToPath } from 'node:url';
import cookie from '@fastify/cookie';
import helmet from '@fastify/helmet';
import rateLimit from '@fastify/rate-limit';
import fastifyStatic from '@fastify/static';
import swagger from '@fastify/swagger';
import swaggerUi from '@fastify/swagger-ui';
import { CAUTION } from '@isentrope/monitor';
import Fastify, {
  type FastifyBaseLogger,
  type FastifyInstance,
  type RawReplyDefaultExpression,
  type RawRequestDefaultExpression,
  type RawServerDefault,
} from 'fastify';
import {
  jsonSchemaTransform,
  serializerCompiler,
  validatorCompiler,
  type ZodTypeProvider,
} from 'fastify-type-provider-zod';
import type pg from 'pg';
import type { Logger } from 'pino';
import { ensureInitialAdmin } from './auth/credentials.js';
import { authPlugin } from './auth/plugin.js';
import type { Principal, Role } from './auth/roles.js';
import { installErrorHandling } from './http/problems.js';
import { createMetricsRegistry, type MetricsRegistry } from './metrics.js';
import { alertRoutes } from './routes/alerts.js';
import { authRoutes } from './routes/auth.js';
import { baselineRoutes } from './routes/baselines.js';
import { chartRoutes } from './routes/chart.js';
import { exportRoutes } from './routes/exports.js';
import { healthRoutes } from './routes/health.js';
import { linkRoutes } from './routes/links.js';
import { machineRoutes } from './routes/machines.js';
import { metricsRoutes } from './routes/metrics.js';
import { plantRoutes } from './routes/plant.js';
import { quarantineRoutes } from './routes/quarantine.js';
import { resultRoutes } from './routes/results.js';

/**
 * A plugin another service mounts in this app (e.g. the ingest service's HTTP push routes):
 * a function that registers it, so each plugin keeps its own option type.
 */
export type MountedPlugin = (app: FastifyInstance) => Promise<void>;

export interface ApiDependencies {
  readonly pool: pg.Pool;
  readonly database: { readonly kind: 'external' | 'embedded'; readonly displayUrl: string };
  readonly logger: Logger;
  readonly version: string;
  /** Epoch ms when the process started. */
  readonly startedAt: number;
  /**
   * Role given to requests without credentials. undefined (the production default) = login
   * required; 'viewer' or 'engineer' only for a local demo bound to 127.0.0.1.
   */
  readonly anonymousRole?: 'viewer' | 'engineer' | undefined;
  /** ISENTROPE_ADMIN_PASSWORD: password of the first admin; generated and logged once when absent. */
  readonly adminPassword?: string | undefined;
  /**
   * Tells the operator a generated first-admin password, once, in place of the log line (the CLI
   * also writes it to a file in the data directory). Must not throw: the password exists nowhere else.
   */
  readonly announceGeneratedAdminPassword?:
    | ((admin: { readonly username: string; readonly password: string }) => Promise<void>)
    | undefined;
  /** Extra plugins to mount, each under its prefix. */
  readonly plugins?: readonly MountedPlugin[] | undefined;
  /** Shared metrics registry (other services add gauges); one is made when absent. */
  readonly metrics?: MetricsRegistry | undefined;
  /** Requests per client and window; false turns the limit off (benchmarks). Default 1200 per minute. */
  readonly rateLimit?: { readonly max: number; readonly timeWindowMs: number } | false | undefined;
  /** Set the Secure flag on the session cookie (behind HTTPS). Default false. */
  readonly cookieSecure?: boolean | undefined;
  /** Energy price for the monthly export's cost column. */
  readonly energyPrice?: { readonly perMWh: number; readonly currency: string } | undefined;
  /** Body-size limit [bytes]; default 1 MiB. */
  readonly bodyLimit?: number | undefined;
  /** Clock [ms]; tests may fix it. */
  readonly now?: (() => number) | undefined;
}

/** What the route plugins get: the dependencies with the defaults filled in. */
export interface ApiContext extends ApiDependencies {
  readonly metrics: MetricsRegistry;
  readonly now: () => number;
}

/** The HTTP application: one plugin per resource, the pool and the logger given once here. */
export type ApiApp = FastifyInstance<
  RawServerDefault,
  RawRequestDefaultExpression,
  RawReplyDefaultExpression,
  FastifyBaseLogger,
  ZodTypeProvider
>;

declare module 'fastify' {
  interface FastifyRequest {
    /** Who is calling; undefined when not signed in and no anonymous role is configured. */
    principal: Principal | undefined;
  }
  interface FastifyInstance {
    /** API routes registered without a schema (a test keeps this empty). */
    readonly unschemedRoutes: readonly string[];
  }
  interface FastifyContextConfig {
    /** Least role the route needs; 'public' for health, login, docs and static files. Default 'viewer'. */
    role?: Role | 'public';
  }
}

const here = dirname(fileURLToPath(import.meta.url));
/** services/api/public: the dashboard's static files. */
export const PUBLIC_DIR = join(here, '..', 'public');
const UPLOT_DIR = join(dirname(createRequire(import.meta.url).resolve('uplot')), '.');

export async function buildApp(deps: ApiDependencies): Promise<ApiApp> {
  const ctx: ApiContext = {
    ...deps,
    metrics: deps.metrics ?? createMetricsRegistry(),
    now: deps.now ?? Date.now,
  };
  const log = deps.logger.child({ module: 'api' });
  const app = Fastify({
    loggerInstance: log as FastifyBaseLogger,
    bodyLimit: deps.bodyLimit ?? 1024 * 1024,
    // Our error handler reports the id in problems; keep it short and unique per process.
    requestIdHeader: false,
  }).withTypeProvider<ZodTypeProvider>();
  app.setValidatorCompiler(validatorCompiler);
  app.setSerializerCompiler(serializerCompiler);
  // Only JSON bodies: a cross-site HTML form cannot send one without a CORS preflight.
  app.removeContentTypeParser('text/plain');
  installErrorHandling(app);
  const unschemed: string[] = [];
  app.decorate('unschemedRoutes', unschemed);
  app.addHook('onRoute', (route) => {
    if (route.url.startsWith('/api/') && !route.url.startsWith('/api/docs') && route.schema === undefined)
      unschemed.push(`${String(route.method)} ${route.url}`);
  });

  await app.register(helmet, {
    contentSecurityPolicy: {
      directives: {
        defaultSrc: ["'self'"],
        scriptSrc: ["'self'"],
        // uPlot sets element styles from script; inline style attributes are needed for it.
        styleSrc: ["'self'", "'unsafe-inline'"],
        imgSrc: ["'self'", 'data:'],
        connectSrc: ["'self'"],
        objectSrc: ["'none'"],
        frameAncestors: ["'none'"],
        upgradeInsecureRequests: null,
      },
    },
    // The dashboard is served over plain HTTP on a plant network as often as behind TLS.
    strictTransportSecurity: false,
  });
  if (deps.rateLimit !== false) {
    const limit = deps.rateLimit ?? { max: 1200, timeWindowMs: 60_000 };
    await app.register(rateLimit, {
      max: limit.max,
      timeWindow: limit.timeWindowMs,
      errorResponseBuilder: (_request, context) => {
        const error = Object.assign(new Error(`rate limit of ${context.max} per ${context.after}`), {
          statusCode: 429,
          code: 'FST_RATE_LIMITED',
          max: context.max,
          after: context.after,
        });
        return error;
      },
    });
  }
  await app.register(cookie);

  await app.register(swagger, {
    openapi: {
      openapi: '3.0.3',
      info: {
        title: 'Isentrope API',
        version: deps.version,
        description: `Plant historian and condition monitoring for rotating machinery. Errors are application/problem+json with a stable code (see ERRORS.md).\n\n**Caution.** ${CAUTION}`,
      },
      components: {
        securitySchemes: {
          bearer: { type: 'http', scheme: 'bearer', description: 'API token (isk_...)' },
          session: { type: 'apiKey', in: 'cookie', name: 'isentrope_session' },
        },
      },
      security: [{ bearer: [] }, { session: [] }],
    },
    transform: jsonSchemaTransform,
  });
  await app.register(swaggerUi, {
    routePrefix: '/api/docs',
    staticCSP: true,
    uiConfig: { deepLinking: false },
  });
  app.get('/api/openapi.json', { schema: { hide: true }, config: { role: 'public' } }, async () =>
    app.swagger(),
  );

  await app.register(authPlugin, { ctx });
  await app.register(metricsRoutes, { ctx });
  await app.register(healthRoutes, { prefix: '/api', deps });
  await app.register(authRoutes, { prefix: '/api', ctx });
  await app.register(plantRoutes, { prefix: '/api', ctx });
  await app.register(machineRoutes, { prefix: '/api', ctx });
  await app.register(resultRoutes, { prefix: '/api', ctx });
  await app.register(baselineRoutes, { prefix: '/api', ctx });
  await app.register(chartRoutes, { prefix: '/api', ctx });
  await app.register(alertRoutes, { prefix: '/api', ctx });
  await app.register(quarantineRoutes, { prefix: '/api', ctx });
  await app.register(exportRoutes, { prefix: '/api', ctx });
  for (const mount of deps.plugins ?? []) await app.register(async (scope) => mount(scope));
  await app.register(linkRoutes);

  await app.register(fastifyStatic, {
    root: PUBLIC_DIR,
    prefix: '/',
    index: ['index.html'],
    setHeaders: (res, path) => {
      if (path.endsWith('.html')) res.header('content-type', 'text/html; charset=utf-8');
    },
  });
  await app.register(fastifyStatic, { root: UPLOT_DIR, prefix: '/vendor/uplot/', decorateReply: false });

  app.addHook('onReady', async () => {
    try {
      const admin = await ensureInitialAdmin(deps.pool, deps.adminPassword);
      if (admin.created && admin.generatedPassword !== undefined) {
        const generated = { username: admin.username, password: admin.generatedPassword };
        if (deps.announceGeneratedAdminPassword !== undefined)
          await deps.announceGeneratedAdminPassword(generated);
        else
          log.warn(
            generated,
            'first start: created the user "admin" with this generated password, shown once; change it or set ISENTROPE_ADMIN_PASSWORD',
          );
      } else if (admin.created)
        log.info({ username: admin.username }, 'created the first admin from ISENTROPE_ADMIN_PASSWORD');
    } catch (error) {
      log.error({ err: error }, 'could not check for the first admin user');
    }
  });
  return app;
}
