/**
 * What the API's parts share: the dependencies buildApp is given, the context every route plugin
 * gets, and the request and route fields the auth plugin adds. Its own module so the route files
 * need not import the app that imports them.
 */
import type { FastifyInstance } from 'fastify';
import type pg from 'pg';
import type { Logger } from 'pino';
import type { Principal, Role } from './auth/roles.js';
import type { MetricsRegistry } from './metrics.js';

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
   * Role given to requests without credentials: undefined (the production default) = sign-in
   * required; 'viewer' = read without signing in. Never more: every change needs a signed-in user.
   */
  readonly anonymousRole?: 'viewer' | undefined;
  /** Address the server listens on (HOST); decides which Host headers are answered. Default 127.0.0.1. */
  readonly listenHost?: string | undefined;
  /** Host names (optionally ':port') answered besides loopback names (ISENTROPE_PUBLIC_HOST). */
  readonly publicHosts?: readonly string[] | undefined;
  /** Proxies whose X-Forwarded-For/-Proto/-Host are believed (fastify trustProxy); default none. */
  readonly trustProxy?: readonly string[] | undefined;
  /** Bearer token GET /metrics asks for; undefined = /metrics is public. */
  readonly metricsToken?: string | undefined;
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
  /** Secure flag of the session cookie: 'auto' (default) = when the request came over https. */
  readonly cookieSecure?: 'auto' | 'always' | 'never' | undefined;
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
