/** Zod pieces shared by the route schemas. */
import { z } from 'zod';
import { ApiError } from '../errors.js';

export const idParam = z.object({ id: z.coerce.number().int().positive() });

/** ISO 8601 date-time with offset, e.g. 2026-03-01T00:00:00Z. */
export const isoTime = z.iso.datetime({ offset: true });

export const rangeQuery = z.object({
  from: isoTime.optional().describe('Start (inclusive), ISO 8601; default: `to` minus 7 days'),
  to: isoTime.optional().describe('End (exclusive), ISO 8601; default: now'),
});

export const DEFAULT_RANGE_MS = 7 * 86_400_000;

/** Resolve an optional range [ms]; from must be before to. */
export function resolveRange(
  q: { from?: string | undefined; to?: string | undefined },
  nowMs: number,
  defaultSpanMs = DEFAULT_RANGE_MS,
): { fromMs: number; toMs: number } {
  const toMs = q.to === undefined ? nowMs : Date.parse(q.to);
  const fromMs = q.from === undefined ? toMs - defaultSpanMs : Date.parse(q.from);
  if (!(fromMs < toMs))
    throw new ApiError('API_BAD_RANGE', {
      from: new Date(fromMs).toISOString(),
      to: new Date(toMs).toISOString(),
    });
  return { fromMs, toMs };
}

export const pageQuery = z.object({
  limit: z.coerce.number().int().min(1).max(1000).default(100).describe('Page size (1..1000)'),
  cursor: z.string().max(200).optional().describe("Opaque cursor from the previous page's `next`"),
});

export function page<T extends z.ZodType>(item: T) {
  return z.object({
    items: z.array(item),
    next: z.string().nullable().describe('URL of the next page, or null on the last page'),
  });
}

/** Keyset cursors: base64url JSON of the last row's sort key. */
export function encodeCursor(key: readonly (string | number)[]): string {
  return Buffer.from(JSON.stringify(key)).toString('base64url');
}

export function decodeCursor(cursor: string | undefined): (string | number)[] | undefined {
  if (cursor === undefined) return undefined;
  try {
    const v: unknown = JSON.parse(Buffer.from(cursor, 'base64url').toString('utf8'));
    if (Array.isArray(v) && v.every((x) => typeof x === 'string' || typeof x === 'number'))
      return v as (string | number)[];
  } catch {
    // fall through
  }
  throw new ApiError('API_BAD_CURSOR', { cursor });
}

/** The `next` link: the same URL with the cursor replaced. */
export function nextLink(url: string, cursor: string | undefined): string | null {
  if (cursor === undefined) return null;
  const u = new URL(url, 'http://x');
  u.searchParams.set('cursor', cursor);
  return `${u.pathname}${u.search}`;
}

export const problemSchema = z
  .object({
    type: z.string(),
    title: z.string(),
    status: z.number().int(),
    detail: z.string(),
    code: z.string(),
    instance: z.string(),
    errors: z
      .array(z.object({ path: z.string(), message: z.string(), code: z.string().optional() }))
      .optional(),
  })
  .describe('application/problem+json (RFC 9457)');

/** Standard error responses for the OpenAPI document. */
export const errorResponses = {
  400: problemSchema,
  401: problemSchema,
  403: problemSchema,
  404: problemSchema,
} as const;
