import Fastify, {
  type FastifyBaseLogger,
  type FastifyInstance,
  type RawReplyDefaultExpression,
  type RawRequestDefaultExpression,
  type RawServerDefault,
} from 'fastify';
import { serializerCompiler, validatorCompiler, type ZodTypeProvider } from 'fastify-type-provider-zod';
import type pg from 'pg';
import type { Logger } from 'pino';
import { healthRoutes } from './routes/health.js';

export interface ApiDependencies {
  readonly pool: pg.Pool;
  readonly database: { readonly kind: 'external' | 'embedded'; readonly displayUrl: string };
  readonly logger: Logger;
  readonly version: string;
  /** Epoch ms when the process started. */
  readonly startedAt: number;
}

/** The HTTP application: one plugin per resource, the pool and the logger given once here. */
export type ApiApp = FastifyInstance<
  RawServerDefault,
  RawRequestDefaultExpression,
  RawReplyDefaultExpression,
  FastifyBaseLogger,
  ZodTypeProvider
>;

export async function buildApp(deps: ApiDependencies): Promise<ApiApp> {
  const app = Fastify({
    loggerInstance: deps.logger.child({ module: 'api' }) as FastifyBaseLogger,
    bodyLimit: 1024 * 1024,
  }).withTypeProvider<ZodTypeProvider>();
  app.setValidatorCompiler(validatorCompiler);
  app.setSerializerCompiler(serializerCompiler);
  await app.register(healthRoutes, { prefix: '/api', deps });
  return app;
}
