/**
 * HTTP push for bridges: POST /ingest/samples with a JSON array of
 * {tag, time, value, quality?}. The bearer token is checked before the body is read; the
 * route has its own rate limit (when the app registers @fastify/rate-limit). Each item is
 * checked on its own (push/items.ts) and answered with its own status (push/outcome.ts):
 * stored, duplicate, conflict (the first stored value is kept) or rejected with a reason.
 * Stored items are committed before the answer.
 */
import { createHash, timingSafeEqual } from 'node:crypto';
// The route's config.rateLimit is typed by @fastify/rate-limit's declarations.
import type {} from '@fastify/rate-limit';
import type { FastifyInstance, FastifyPluginAsync, FastifyReply, FastifyRequest } from 'fastify';
import { errorMessage, IngestError } from './errors.js';
import type { SourceMetrics } from './metrics.js';
import { type PushRejection, readPushItems } from './push/items.js';
import { type PushConflict, type PushItemStatus, storePushItems } from './push/outcome.js';
import { type TimeWindow, timeWindowOf } from './time-window.js';
import type { CommittedSampleSink, TagLookup } from './types.js';

export type { PushRejection } from './push/items.js';
export { pushItemSchema } from './push/items.js';
export type { PushConflict, PushItemStatus } from './push/outcome.js';

export interface PushRateLimit {
  /** Requests per client address and window. */
  readonly max: number;
  readonly timeWindowMs: number;
}

/** 3,000 requests a minute per address: 50 a second, each of up to maxItems items (common practice, no source). */
export const DEFAULT_PUSH_RATE_LIMIT: PushRateLimit = { max: 3000, timeWindowMs: 60_000 };

export interface HttpPushOptions {
  readonly sink: CommittedSampleSink;
  /** Tag names to ids; a function is called per request (so a reloaded plant is seen). */
  readonly tags: TagLookup | (() => TagLookup | Promise<TagLookup>);
  /** SHA-256 (hex) of the bearer token the bridge must present (INGEST_TOKEN). */
  readonly tokenSha256: string;
  /** Items per request (default 10,000). */
  readonly maxItems?: number;
  /** Request body limit [bytes] (default 16 MiB). */
  readonly bodyLimit?: number;
  /** Plausible sample times (default 1970-01-01 to now + 1 day). */
  readonly timeWindow?: Partial<TimeWindow>;
  /** This route's own limit, apart from the app's (default DEFAULT_PUSH_RATE_LIMIT); false: none. */
  readonly rateLimit?: PushRateLimit | false;
  /** Clock [ms] for the time window; tests may fix it. */
  readonly now?: () => number;
  readonly metrics?: SourceMetrics;
}

export interface PushAnswer {
  /** Items new to the store (the same as stored; kept for bridges written against the first answer). */
  readonly accepted: number;
  readonly stored: number;
  /** Items identical to a sample already stored (or sent earlier in the batch). */
  readonly duplicates: number;
  /** Items whose tag and time already hold another value or quality: not stored, the first value kept. */
  readonly conflicts: readonly PushConflict[];
  readonly rejected: readonly PushRejection[];
  /** One status per item, in the order sent. */
  readonly items: readonly PushItemStatus[];
}

export function sha256Hex(text: string): string {
  return createHash('sha256').update(text, 'utf8').digest('hex');
}

/** Compares the presented token's hash with the expected one in constant time. */
export function tokenMatches(presented: string, expectedSha256: string): boolean {
  const a = Buffer.from(sha256Hex(presented), 'hex');
  const b = Buffer.from(expectedSha256, 'hex');
  return b.length === a.length && timingSafeEqual(a, b);
}

function bad(reply: FastifyReply, status: number, code: string, message: string, extra: object = {}) {
  return reply.code(status).send({ code, message, ...extra });
}

/** onRequest: runs before the body is read, so a caller without the token costs no parsing. */
function bearerCheck(tokenSha256: string) {
  return async (request: FastifyRequest, reply: FastifyReply): Promise<void> => {
    const m = /^Bearer\s+(\S+)$/i.exec(request.headers.authorization ?? '');
    if (m === null || !tokenMatches(m[1]!, tokenSha256))
      await bad(reply, 401, 'INGEST_UNAUTHORIZED', 'a valid bearer token is required');
  };
}

/** The route's own @fastify/rate-limit settings: its own counter, and an answer saying when to retry. */
function rateLimitConfig(limit: PushRateLimit | false) {
  if (limit === false) return false;
  return {
    max: limit.max,
    timeWindow: limit.timeWindowMs,
    errorResponseBuilder: (_request: FastifyRequest, context: { max: number; ttl: number }) =>
      new IngestError(
        'INGEST_RATE_LIMITED',
        `more than ${context.max} push requests in ${limit.timeWindowMs / 1000} s from this address; retry after ${Math.ceil(context.ttl / 1000)} s (the Retry-After header)`,
        { retryAfterSeconds: Math.ceil(context.ttl / 1000), max: context.max },
      ),
  };
}

/** Errors of this route's scope, answered in its own shape ({code, message}); every 5xx logged with its cause. */
function pushErrors(error: unknown, request: FastifyRequest, reply: FastifyReply) {
  if (error instanceof IngestError && error.code === 'INGEST_RATE_LIMITED')
    return bad(reply, 429, error.code, error.message, error.details);
  const code = (error as { code?: unknown }).code;
  if (code === 'FST_ERR_CTP_BODY_TOO_LARGE')
    return bad(reply, 413, 'INGEST_BAD_BATCH', 'the body is larger than the route allows; send fewer items');
  const status = (error as { statusCode?: unknown }).statusCode;
  if (typeof status === 'number' && status >= 400 && status < 500)
    return bad(reply, status, 'INGEST_BAD_BATCH', `the body cannot be read: ${errorMessage(error)}`);
  request.log.error({ err: error }, 'HTTP push failed');
  return bad(reply, 500, 'INGEST_INTERNAL', `the push could not be handled (request ${request.id})`);
}

export const httpPushRoutes: FastifyPluginAsync<HttpPushOptions> = async (app: FastifyInstance, options) => {
  const maxItems = options.maxItems ?? 10_000;
  const window = timeWindowOf(options.timeWindow);
  const now = options.now ?? Date.now;
  app.setErrorHandler(pushErrors);
  app.post(
    '/ingest/samples',
    {
      bodyLimit: options.bodyLimit ?? 16 * 1024 * 1024,
      onRequest: bearerCheck(options.tokenSha256),
      config: { rateLimit: rateLimitConfig(options.rateLimit ?? DEFAULT_PUSH_RATE_LIMIT) },
    },
    async (request, reply) => {
      const body: unknown = request.body;
      if (!Array.isArray(body))
        return bad(reply, 400, 'INGEST_BAD_BATCH', 'the body must be a JSON array of samples');
      if (body.length > maxItems) {
        const message = `at most ${maxItems} items per request; got ${body.length}`;
        return bad(reply, 413, 'INGEST_BAD_BATCH', message, { maxItems });
      }
      const tags = typeof options.tags === 'function' ? await options.tags() : options.tags;
      const { samples, rejected } = readPushItems(body, tags, window, now());
      let outcome: Awaited<ReturnType<typeof storePushItems>>;
      try {
        outcome = await storePushItems(options.sink, body.length, samples, rejected);
      } catch (error) {
        options.metrics?.error(errorMessage(error));
        request.log.error({ err: error, samples: samples.length }, 'HTTP push: storing the batch failed');
        // Nothing is acknowledged: the bridge sends the batch again, and the store keeps each (tag, time) once.
        return bad(
          reply,
          503,
          'INGEST_WRITE_FAILED',
          'the samples could not be stored; send the batch again',
        );
      }
      if (samples.length > 0) options.metrics?.samples(samples);
      options.metrics?.quarantined(rejected.length);
      const answer: PushAnswer = { accepted: outcome.stored, ...outcome, rejected };
      return reply.code(200).send(answer);
    },
  );
};
