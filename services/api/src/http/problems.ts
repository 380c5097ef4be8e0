/**
 * The one place where errors become HTTP: every error leaves as application/problem+json with a
 * stable code from the registry (src/errors.ts). Library errors (monitor, thermo) carry their own
 * stable code, passed on in `reason`; nothing is parsed from a message.
 */

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
  if (hasCode(error)) {
    const fe = error as FastifyError & { max?: number; after?: string };
    switch (fe.code) {
      case 'FST_ERR_CTP_BODY_TOO_LARGE':
        return new ApiError('API_PAYLOAD_TOO_LARGE', { limit: 'the configured' });
      case 'FST_ERR_CTP_INVALID_MEDIA_TYPE':
        return new ApiError('API_UNSUPPORTED_MEDIA', { contentType: 'this' });
      case 'FST_ERR_CTP_EMPTY_JSON_BODY':
      case 'FST_ERR_CTP_INVALID_JSON_BODY':
        return new ApiError('API_VALIDATION', { summary: fe.message });
      case 'FST_RATE_LIMITED':
        return new ApiError('API_RATE_LIMITED', { max: fe.max, window: 'window', after: fe.after });
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
    if (apiError.code === 'API_RATE_LIMITED') {
      const after = (error as { after?: string }).after;
      if (after !== undefined) reply.header('retry-after', after.replace(/\D.*$/, ''));
    }
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
