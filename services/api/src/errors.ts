/**
 * The API's one error registry: a stable code, an HTTP status, a title and a message template per
 * error. Codes are never reused or renamed once released; each is documented in services/api/ERRORS.md
 * (a test checks both). Errors are data (code + values); they become application/problem+json
 * (RFC 9457) in one place, `toProblem`, and are never parsed back from their text.
 */

export interface ErrorDefinition {
  readonly status: number;
  readonly title: string;
  /** Message template; `{name}` is replaced by the value of that parameter. */
  readonly template: string;
}

export const API_ERRORS = {
  API_VALIDATION: {
    status: 400,
    title: 'Invalid request',
    template: 'The request does not match its schema: {summary}',
  },
  API_BAD_RANGE: {
    status: 400,
    title: 'Invalid time range',
    template: 'from ({from}) must be before to ({to}).',
  },
  API_BAD_CURSOR: {
    status: 400,
    title: 'Invalid cursor',
    template: 'The cursor "{cursor}" is not one this API issued.',
  },
  API_UNAUTHENTICATED: {
    status: 401,
    title: 'Authentication required',
    template: 'Sign in or send an API token (Authorization: Bearer ...).',
  },
  API_BAD_CREDENTIALS: {
    status: 401,
    title: 'Wrong username or password',
    template: 'The username or the password is wrong, or the user is disabled.',
  },
  API_BAD_TOKEN: {
    status: 401,
    title: 'Invalid token',
    template: 'The API token or session is unknown, revoked or expired.',
  },
  API_BAD_CURRENT_PASSWORD: {
    status: 403,
    title: 'Current password wrong',
    template:
      'The current password is wrong; type the password you sign in with. Lost it? An administrator can set a new one.',
  },
  API_PASSWORD_TOO_SHORT: {
    status: 400,
    title: 'New password too short',
    template: 'The new password is too short (length {length}); choose one of at least {min} characters.',
  },
  API_PASSWORD_UNCHANGED: {
    status: 400,
    title: 'New password is the current one',
    template: 'The new password is the same as the current one; choose a different password.',
  },
  API_BAD_METRICS_TOKEN: {
    status: 401,
    title: 'Metrics token required',
    template: 'GET /metrics needs the metrics token (Authorization: Bearer ..., ISENTROPE_METRICS_TOKEN).',
  },
  API_FORBIDDEN: {
    status: 403,
    title: 'Not allowed',
    template: 'This needs the role {required}; you have {role}.',
  },
  API_NOT_FOUND: { status: 404, title: 'Not found', template: '{entity} {id} does not exist.' },
  API_ROUTE_NOT_FOUND: { status: 404, title: 'No such route', template: 'No route {method} {url}.' },
  API_CONFLICT: { status: 409, title: 'Conflict', template: '{entity} {id}: {reason}' },
  API_ALERT_REJECTED: {
    status: 409,
    title: 'Alert action refused',
    template: 'Alert {id}: {reason} ({rejection}).',
  },
  API_NO_RESULT: {
    status: 404,
    title: 'No result yet',
    template: 'Machine {machineId} has no {what} result yet.',
  },
  API_NO_BASELINE: {
    status: 409,
    title: 'No baseline',
    template: 'Machine {machineId} has no active baseline.',
  },
  API_FIT_FAILED: {
    status: 422,
    title: 'Baseline fit failed',
    template: 'The baseline could not be fitted: {reason}',
  },
  API_UNPROCESSABLE: { status: 422, title: 'Cannot compute', template: '{reason}' },
  API_PAYLOAD_TOO_LARGE: {
    status: 413,
    title: 'Request body too large',
    template: 'The body exceeds the limit of {limit} bytes.',
  },
  API_UNSUPPORTED_MEDIA: {
    status: 415,
    title: 'Unsupported media type',
    template: 'Content type {contentType} is not accepted here; send application/json.',
  },
  API_RATE_LIMITED: {
    status: 429,
    title: 'Too many requests',
    template: 'Rate limit of {max} requests per {window} reached; retry in {after}.',
  },
  API_SIGN_IN_LIMITED: {
    status: 429,
    title: 'Too many failed sign-ins',
    template:
      'Too many failed sign-ins for this account ({max} in {windowMinutes} min); retry in {retryAfterS} s, or ask an administrator to set a new password.',
  },
  API_MISDIRECTED_HOST: {
    status: 421,
    title: 'Host not served here',
    template:
      'This server does not answer to the host "{host}"; open it by a name in ISENTROPE_PUBLIC_HOST, or by localhost on this machine.',
  },
  API_EXPORT_NOT_READY: {
    status: 409,
    title: 'Export not ready',
    template: 'Export {id} has status {status}.',
  },
  API_INTERNAL: {
    status: 500,
    title: 'Internal error',
    template: 'An unexpected error occurred; it has been logged (request {requestId}).',
  },
  API_DATABASE_UNAVAILABLE: {
    status: 503,
    title: 'Database unavailable',
    template: 'The database did not answer: {reason}',
  },
} as const satisfies Record<string, ErrorDefinition>;

export type ApiErrorCode = keyof typeof API_ERRORS;

export type ErrorParams = Readonly<Record<string, string | number | boolean | null | undefined>>;

/** Fill a template's `{name}` fields; a missing value shows as `?` so the gap is visible. */
export function formatTemplate(template: string, params: ErrorParams): string {
  return template.replace(/\{(\w+)\}/g, (_, name: string) => {
    const v = params[name];
    return v === undefined || v === null ? '?' : String(v);
  });
}

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
