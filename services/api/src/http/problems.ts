/**
 * The one place where errors become HTTP: every error leaves as application/problem+json with a
 * stable code from the registry (src/errors.ts). Library errors (monitor, thermo) carry their own
 * stable code, passed on in `reason`; nothing is parsed from a message.
 */

// The route's config.rateLimit is typed by @fastify/rate-limit's declarations.
import type {} from '@fastify/rate-limit';
import { MONITOR_ERRORS } from '@isentrope/monitor';
import { THERMO_ERRORS } from '@isentrope/thermo';
import type { FastifyError, FastifyInstance, FastifyReply, FastifyRequest } from 'fastify';
import { hasZodFastifySchemaValidationErrors } from 'fastify-type-provider-zod';
import { ApiError, type ProblemFieldError, toProblem } from '../errors.js';

export const PROBLEM_TYPE = 'application/problem+json; charset=utf-8';

export function sendProblem(reply: FastifyReply, request: FastifyRequest, error: ApiError): FastifyReply {
  return reply
    .code(error.status)
    .type(PROBLEM_TYPE)
    .send(JSON.stringify(toProblem(error, request.url)));
}

/** The error @fastify/rate-limit throws for a request past the limit (see rateLimitError). */
interface RateLimited {
  readonly code: 'FST_RATE_LIMITED';
  readonly message: string;
  readonly statusCode: 429;
  readonly max: number;
  /** The limit's window [ms]. */
  readonly windowMs: number;
  /** Whole seconds to the end of the client's window, at least 1: Retry-After (RFC 9110 section 10.2.3). */
  readonly retryAfterSeconds: number;
}

/**
 * errorResponseBuilder of the app-wide @fastify/rate-limit: the seconds come from the plugin's
 * own ttl (the time left in the client's window [ms]), rounded up as the plugin rounds its own
 * Retry-After header; the window is the route's own (config.rateLimit) or the app's.
 */
export function rateLimitError(
  request: FastifyRequest,
  context: { readonly max: number; readonly ttl: number },
  appWindowMs: number,
): Error & RateLimited {
  const route = request.routeOptions.config.rateLimit;
  const windowMs =
    typeof route === 'object' && typeof route.timeWindow === 'number' ? route.timeWindow : appWindowMs;
  const retryAfterSeconds = Math.max(1, Math.ceil(context.ttl / 1000));
  return Object.assign(new Error(`rate limit of ${context.max} per ${windowMs / 1000} s`), {
    code: 'FST_RATE_LIMITED' as const,
    statusCode: 429 as const,
    max: context.max,
    windowMs,
    retryAfterSeconds,
  });
}

function isRateLimited(error: unknown): error is RateLimited {
  return (
    (error as { code?: unknown }).code === 'FST_RATE_LIMITED' &&
    typeof (error as { retryAfterSeconds?: unknown }).retryAfterSeconds === 'number'
  );
}

function hasCode(error: unknown): error is { code: string; message: string } {
  return (
    typeof error === 'object' &&
    error !== null &&
    typeof (error as { code?: unknown }).code === 'string' &&
    typeof (error as { message?: unknown }).message === 'string'
  );
}

/** Map any thrown value to an ApiError. */
export function asApiError(error: unknown, requestId: string): ApiError {
  if (error instanceof ApiError) return error;
  if (hasZodFastifySchemaValidationErrors(error)) {
    const errors: ProblemFieldError[] = error.validation.map((v) => ({
      path: `${error.validationContext ?? 'request'}${v.instancePath.replace(/\//g, '.')}`,
      message: v.message ?? 'invalid',
      code: v.keyword,
    }));
    return new ApiError(
      'API_VALIDATION',
      { summary: errors.map((e) => `${e.path}: ${e.message}`).join('; ') },
      errors,
    );
  }
  if (isRateLimited(error))
    return new ApiError('API_RATE_LIMITED', {
      max: error.max,
      window: `${error.windowMs / 1000} s`,
      after: `${error.retryAfterSeconds} s`,
    });
  if (hasCode(error)) {
    const fe = error as FastifyError;
    switch (fe.code) {
      case 'FST_ERR_CTP_BODY_TOO_LARGE':
        return new ApiError('API_PAYLOAD_TOO_LARGE', { limit: 'the configured' });
      case 'FST_ERR_CTP_INVALID_MEDIA_TYPE':
        return new ApiError('API_UNSUPPORTED_MEDIA', { contentType: 'this' });
      case 'FST_ERR_CTP_EMPTY_JSON_BODY':
      case 'FST_ERR_CTP_INVALID_JSON_BODY':
        return new ApiError('API_VALIDATION', { summary: fe.message });
      case 'ECONNREFUSED':
      case '57P01':
      case '08006':
        return new ApiError('API_DATABASE_UNAVAILABLE', { reason: fe.code });
    }
    // Typed errors of our pure packages (their catalogs give 422): the computation cannot be made
    // with these inputs.
    if (Object.hasOwn(THERMO_ERRORS, fe.code) || Object.hasOwn(MONITOR_ERRORS, fe.code))
      return new ApiError('API_UNPROCESSABLE', { reason: `${fe.code}: ${fe.message}` });
  }
  return new ApiError('API_INTERNAL', { requestId });
}

export function installErrorHandling(app: FastifyInstance): void {
  app.setErrorHandler((error, request, reply) => {
    // A path the static files refuse as non-canonical names no file: a 404, not a fault of ours.
    const apiError =
      (error as { code?: unknown }).code === 'FST_STATIC_FORBIDDEN_PATH'
        ? new ApiError('API_ROUTE_NOT_FOUND', { method: request.method, url: request.url })
        : asApiError(error, request.id);
    if (apiError.code === 'API_INTERNAL') request.log.error({ err: error }, 'unhandled error');
    else if (apiError.status >= 500) request.log.warn({ err: error }, apiError.message);
    // The plugin set Retry-After already (the same seconds); said again so the header and the
    // detail cannot part.
    if (isRateLimited(error)) reply.header('retry-after', String(error.retryAfterSeconds));
    return sendProblem(reply, request, apiError);
  });
  app.setNotFoundHandler((request, reply) =>
    sendProblem(
      reply,
      request,
      new ApiError('API_ROUTE_NOT_FOUND', { method: request.method, url: request.url }),
    ),
  );
}
