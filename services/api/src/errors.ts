/**
 * The API's one error registry: a stable code, an HTTP status, a title and a message template per
 * error. Codes are never reused or renamed once released; each is documented in the project's ERRORS.md
 * with every other area's codes (scripts/error-registry.ts; a test checks both). Errors are data (code + values); they become application/problem+json
 * (RFC 9457) in one place, `toProblem`, and are never parsed back from their text.
 */

import { type ErrorSpec, formatTemplate, type TemplateParams } from '@isentrope/errors';

export interface ErrorDefinition extends ErrorSpec {
  readonly status: number;
  readonly title: string;
  /** Message template; `{name}` is replaced by the value of that parameter. */
  readonly template: string;
}

export const API_ERRORS = {
  API_VALIDATION: {
    meaning:
      "The request (path, query or body) does not match the route's schema; `errors` lists each field.",
    status: 400,
    title: 'Invalid request',
    template: 'The request does not match its schema: {summary}',
  },
  API_BAD_RANGE: {
    meaning: 'A time range whose `from` is not before its `to`.',
    status: 400,
    title: 'Invalid time range',
    template: 'from ({from}) must be before to ({to}).',
  },
  API_BAD_CURSOR: {
    meaning: 'A pagination cursor this API did not issue (or that was altered).',
    status: 400,
    title: 'Invalid cursor',
    template: 'The cursor "{cursor}" is not one this API issued.',
  },
  API_UNAUTHENTICATED: {
    meaning: 'No credentials and no anonymous access: sign in or send a token.',
    status: 401,
    title: 'Authentication required',
    template: 'Sign in or send an API token (Authorization: Bearer ...).',
  },
  API_BAD_CREDENTIALS: {
    meaning: 'Login refused: wrong username or password, or the user is disabled.',
    status: 401,
    title: 'Wrong username or password',
    template: 'The username or the password is wrong, or the user is disabled.',
  },
  API_BAD_TOKEN: {
    meaning: 'The bearer token or session cookie is unknown, revoked or expired.',
    status: 401,
    title: 'Invalid token',
    template: 'The API token or session is unknown, revoked or expired.',
  },
  API_BAD_CURRENT_PASSWORD: {
    meaning:
      'Password change refused: the current password is wrong (403, not 401: the caller is signed in and stays so).',
    status: 403,
    title: 'Current password wrong',
    template:
      'The current password is wrong; type the password you sign in with. Lost it? An administrator can set a new one.',
  },
  API_PASSWORD_TOO_SHORT: {
    meaning: 'A new password shorter than 12 characters.',
    status: 400,
    title: 'New password too short',
    template: 'The new password is too short (length {length}); choose one of at least {min} characters.',
  },
  API_PASSWORD_UNCHANGED: {
    meaning: 'A new password equal to the current one.',
    status: 400,
    title: 'New password is the current one',
    template: 'The new password is the same as the current one; choose a different password.',
  },
  API_BAD_METRICS_TOKEN: {
    meaning: 'GET /metrics without the metrics token (only when ISENTROPE_METRICS_TOKEN is set).',
    status: 401,
    title: 'Metrics token required',
    template: 'GET /metrics needs the metrics token (Authorization: Bearer ..., ISENTROPE_METRICS_TOKEN).',
  },
  API_FORBIDDEN: {
    meaning: 'Authenticated, but the role is too low for this action (viewer < operator < engineer < admin).',
    status: 403,
    title: 'Not allowed',
    template: 'This needs the role {required}; you have {role}.',
  },
  API_NOT_FOUND: {
    meaning: 'The addressed entity (machine, tag, alert, export, token, user) does not exist.',
    status: 404,
    title: 'Not found',
    template: '{entity} {id} does not exist.',
  },
  API_ROUTE_NOT_FOUND: {
    meaning: 'No route matches the method and path.',
    status: 404,
    title: 'No such route',
    template: 'No route {method} {url}.',
  },
  API_CONFLICT: {
    meaning: 'The change conflicts with the stored state (e.g. a username that exists).',
    status: 409,
    title: 'Conflict',
    template: '{entity} {id}: {reason}',
  },
  API_ALERT_REJECTED: {
    meaning:
      'The alert lifecycle refused the action (e.g. acknowledge when nothing awaits it); the reason code of the lifecycle is given.',
    status: 409,
    title: 'Alert action refused',
    template: 'Alert {id}: {reason} ({rejection}).',
  },
  API_NO_RESULT: {
    meaning: 'The machine has no computed result of the kind asked for yet.',
    status: 404,
    title: 'No result yet',
    template: 'Machine {machineId} has no {what} result yet.',
  },
  API_NO_BASELINE: {
    meaning: "A figure needs the machine's active baseline and there is none.",
    status: 409,
    title: 'No baseline',
    template: 'Machine {machineId} has no active baseline.',
  },
  API_FIT_FAILED: {
    meaning: 'The baseline fit over the chosen period failed (too few points, singular system).',
    status: 422,
    title: 'Baseline fit failed',
    template: 'The baseline could not be fitted: {reason}',
  },
  API_UNPROCESSABLE: {
    meaning: 'The request is well formed but the computation cannot be made (the reason is given).',
    status: 422,
    title: 'Cannot compute',
    template: '{reason}',
  },
  API_PAYLOAD_TOO_LARGE: {
    meaning: 'The request body exceeds the body-size limit.',
    status: 413,
    title: 'Request body too large',
    template: 'The body exceeds the limit of {limit} bytes.',
  },
  API_UNSUPPORTED_MEDIA: {
    meaning: 'A body in a content type other than JSON.',
    status: 415,
    title: 'Unsupported media type',
    template: 'Content type {contentType} is not accepted here; send application/json.',
  },
  API_RATE_LIMITED: {
    meaning: 'Too many requests from one client in the window; retry after the time given.',
    status: 429,
    title: 'Too many requests',
    template: 'Rate limit of {max} requests per {window} reached; retry in {after}.',
  },
  API_SIGN_IN_LIMITED: {
    meaning:
      'Sign-in refused for the account after too many failed sign-ins (10 in 15 min, from any address); `Retry-After` says when.',
    status: 429,
    title: 'Too many failed sign-ins',
    template:
      'Too many failed sign-ins for this account ({max} in {windowMinutes} min); retry in {retryAfterS} s, or ask an administrator to set a new password.',
  },
  API_MISDIRECTED_HOST: {
    meaning:
      'The Host header is not a name this server answers to (DNS-rebinding guard): set ISENTROPE_PUBLIC_HOST, or use localhost.',
    status: 421,
    title: 'Host not served here',
    template:
      'This server does not answer to the host "{host}"; open it by a name in ISENTROPE_PUBLIC_HOST, or by localhost on this machine.',
  },
  API_EXPORT_NOT_READY: {
    meaning: 'The export exists but is not done (pending or failed).',
    status: 409,
    title: 'Export not ready',
    template: 'Export {id} has status {status}.',
  },
  API_INTERNAL: {
    meaning: 'An unexpected error; the server log has it under the request id.',
    status: 500,
    title: 'Internal error',
    template: 'An unexpected error occurred; it has been logged (request {requestId}).',
  },
  API_DATABASE_UNAVAILABLE: {
    meaning: 'The database did not answer.',
    status: 503,
    title: 'Database unavailable',
    template: 'The database did not answer: {reason}',
  },
} as const satisfies Record<string, ErrorDefinition>;

export type ApiErrorCode = keyof typeof API_ERRORS;

export type ErrorParams = TemplateParams;
export { formatTemplate };

/** A typed API error: its code and the values it concerns. */
export class ApiError extends Error {
  readonly status: number;
  constructor(
    readonly code: ApiErrorCode,
    readonly params: ErrorParams = {},
    /** Field-level problems (validation). */
    readonly errors?: readonly ProblemFieldError[],
  ) {
    super(formatTemplate(API_ERRORS[code].template, params));
    this.name = 'ApiError';
    this.status = API_ERRORS[code].status;
  }
}

export interface ProblemFieldError {
  readonly path: string;
  readonly message: string;
  readonly code?: string;
}

/** RFC 9457 problem details, with our stable `code`. */
export interface Problem {
  readonly type: string;
  readonly title: string;
  readonly status: number;
  readonly detail: string;
  readonly code: ApiErrorCode;
  readonly instance: string;
  readonly errors?: readonly ProblemFieldError[];
  readonly [extra: string]: unknown;
}

/** Where each code is described for people; also the problem's `type` URI. */
export const ERROR_DOC_BASE = '/api/docs/errors#';

export function toProblem(error: ApiError, instance: string): Problem {
  const def = API_ERRORS[error.code];
  return {
    type: `${ERROR_DOC_BASE}${error.code}`,
    title: def.title,
    status: def.status,
    detail: error.message,
    code: error.code,
    instance,
    ...(error.errors !== undefined ? { errors: error.errors } : {}),
  };
}
