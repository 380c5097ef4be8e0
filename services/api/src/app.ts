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
import { ensureInitialAdmin } from './auth/credentials.js';
import { authPlugin } from './auth/plugin.js';
import { answerUndecodableUrl, installRequestScreen } from './auth/request-screen.js';
import type { ApiContext, ApiDependencies } from './context.js';
import { installErrorHandling, rateLimitError } from './http/problems.js';
import { createMetricsRegistry } from './metrics.js';
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

export type { ApiContext, ApiDependencies, MountedPlugin } from './context.js';

/** The HTTP application: one plugin per resource, the pool and the logger given once here. */
export type ApiApp = FastifyInstance<
  RawServerDefault,
  RawRequestDefaultExpression,
  RawReplyDefaultExpression,
  FastifyBaseLogger,
  ZodTypeProvider
>;

const here = dirname(fileURLToPath(import.meta.url));
/** services/api/public: the dashboard's static files. */
export const PUBLIC_DIR = join(here, '..', 'public');
const UPLOT_DIR = join(dirname(createRequire(import.meta.url).resolve('uplot')), '.');

/** The fastify instance with its compilers, error handling and request screen (Host rule, odd paths). */
function createServer(deps: ApiDependencies, log: FastifyBaseLogger): ApiApp {
  const app = Fastify({
    loggerInstance: log,
    bodyLimit: deps.bodyLimit ?? 1024 * 1024,
    // Our error handler reports the id in problems; keep it short and unique per process.
    requestIdHeader: false,
    // Forwarded headers count only from the configured proxies (request.ip, .protocol, .host).
    trustProxy: deps.trustProxy === undefined ? false : [...deps.trustProxy],
    frameworkErrors: answerUndecodableUrl,
  }).withTypeProvider<ZodTypeProvider>();
  app.setValidatorCompiler(validatorCompiler);
  app.setSerializerCompiler(serializerCompiler);
  // Only JSON bodies: a cross-site HTML form cannot send one without a CORS preflight.
  app.removeContentTypeParser('text/plain');
  installErrorHandling(app);
  installRequestScreen(app, {
    publicHosts: deps.publicHosts ?? [],
    listenHost: deps.listenHost ?? '127.0.0.1',
  });
  const unschemed: string[] = [];
  app.decorate('unschemedRoutes', unschemed);
  app.addHook('onRoute', (route) => {
    if (route.url.startsWith('/api/') && !route.url.startsWith('/api/docs') && route.schema === undefined)
      unschemed.push(`${String(route.method)} ${route.url}`);
  });
  return app;
}

/** Security headers, the global rate limit and cookies. */
async function registerProtection(app: ApiApp, deps: ApiDependencies): Promise<void> {
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
      errorResponseBuilder: (request, context) => rateLimitError(request, context, limit.timeWindowMs),
    });
  }
  await app.register(cookie);
}

/** The OpenAPI document (with the caution) and its viewer. */
async function registerOpenApi(app: ApiApp, deps: ApiDependencies): Promise<void> {
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
}

/** Authentication, one plugin per resource, the mounted plugins (HTTP push) and the dashboard files. */
async function registerRoutes(app: ApiApp, deps: ApiDependencies, ctx: ApiContext): Promise<void> {
  await app.register(authPlugin, { ctx });
  await app.register(metricsRoutes, { ctx });
  await app.register(healthRoutes, { prefix: '/api', deps });
  for (const routes of [
    authRoutes,
    plantRoutes,
    machineRoutes,
    resultRoutes,
    baselineRoutes,
    chartRoutes,
    alertRoutes,
    quarantineRoutes,
    exportRoutes,
  ])
    await app.register(routes, { prefix: '/api', ctx });
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
}

/** On the first start, the first admin user (from ISENTROPE_ADMIN_PASSWORD, or generated and told once). */
async function announceFirstAdmin(deps: ApiDependencies, log: FastifyBaseLogger): Promise<void> {
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
}

export async function buildApp(deps: ApiDependencies): Promise<ApiApp> {
  const ctx: ApiContext = {
    ...deps,
    metrics: deps.metrics ?? createMetricsRegistry(),
    now: deps.now ?? Date.now,
  };
  const log = deps.logger.child({ module: 'api' }) as FastifyBaseLogger;
  const app = createServer(deps, log);
  await registerProtection(app, deps);
  await registerOpenApi(app, deps);
  await registerRoutes(app, deps, ctx);
  app.addHook('onReady', () => announceFirstAdmin(deps, log));
  return app;
}
