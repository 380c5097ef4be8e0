/**
 * HTTP push for bridges: POST /ingest/samples with a JSON array of
 * {tag, time, value, quality?}. Each item is checked on its own; good items are stored
 * (committed before the answer), bad ones come back with index, field and problem.
 */
import { createHash, timingSafeEqual } from 'node:crypto';
import type { FastifyInstance, FastifyPluginAsync } from 'fastify';
import { z } from 'zod';
import { errorMessage } from './errors.js';
import type { SourceMetrics } from './metrics.js';
import { QUALITY, type Sample, type SampleSink, type TagLookup } from './types.js';
import { isStorableValue, tooLargeReason } from './values.js';

export interface HttpPushOptions {
  readonly sink: SampleSink;
  /** Tag names to ids; a function is called per request (so a reloaded plant is seen). */
  readonly tags: TagLookup | (() => TagLookup | Promise<TagLookup>);
  /** SHA-256 (hex) of the bearer token the bridge must present (INGEST_TOKEN). */
  readonly tokenSha256: string;
  /** Items per request (default 10,000). */
  readonly maxItems?: number;
  /** Request body limit [bytes] (default 16 MiB). */
  readonly bodyLimit?: number;
  readonly metrics?: SourceMetrics;
}

export interface PushRejection {
  readonly index: number;
  readonly field: string;
  readonly problem: string;
}

export interface PushAnswer {
  readonly accepted: number;
  readonly rejected: readonly PushRejection[];
}

export const pushItemSchema = z.strictObject({
  tag: z.string().min(1).max(200),
  /** ISO 8601 with an offset or Z, or epoch milliseconds. */
  time: z.union(
    [z.iso.datetime({ offset: true, precision: undefined }), z.number().int().min(0).max(8.64e15)],
    {
      error: 'expected ISO 8601 with an offset ("2026-03-01T10:00:00Z") or epoch milliseconds',
    },
  ),
  value: z
    .number({ error: 'expected a finite number' })
    .refine(isStorableValue, { error: (issue) => tooLargeReason(String(issue.input)) }),
  /** OPC DA quality code 0..255 (192 good, 64 uncertain, 0 bad); default good. */
  quality: z.number().int().min(0).max(255).optional(),
});

export function sha256Hex(text: string): string {
  return createHash('sha256').update(text, 'utf8').digest('hex');
}

/** Compares the presented token's hash with the expected one in constant time. */
export function tokenMatches(presented: string, expectedSha256: string): boolean {
  const a = Buffer.from(sha256Hex(presented), 'hex');
  const b = Buffer.from(expectedSha256, 'hex');
  return b.length === a.length && timingSafeEqual(a, b);
}

export const httpPushRoutes: FastifyPluginAsync<HttpPushOptions> = async (app: FastifyInstance, options) => {
  const maxItems = options.maxItems ?? 10_000;
  app.post(
    '/ingest/samples',
    { bodyLimit: options.bodyLimit ?? 16 * 1024 * 1024 },
    async (request, reply) => {
      const header = request.headers.authorization ?? '';
      const m = /^Bearer\s+(\S+)$/i.exec(header);
      if (m === null || !tokenMatches(m[1]!, options.tokenSha256)) {
        return reply
          .code(401)
          .send({ code: 'INGEST_UNAUTHORIZED', message: 'a valid bearer token is required' });
      }
      const body: unknown = request.body;
      if (!Array.isArray(body)) {
        return reply
          .code(400)
          .send({ code: 'INGEST_BAD_BATCH', message: 'the body must be a JSON array of samples' });
      }
      if (body.length > maxItems) {
        return reply.code(413).send({
          code: 'INGEST_BAD_BATCH',
          message: `at most ${maxItems} items per request; got ${body.length}`,
          maxItems,
        });
      }
      const tags = typeof options.tags === 'function' ? await options.tags() : options.tags;
      const rejected: PushRejection[] = [];
      const samples: Sample[] = [];
      body.forEach((item: unknown, index) => {
        const parsed = pushItemSchema.safeParse(item);
        if (!parsed.success) {
          for (const issue of parsed.error.issues) {
            rejected.push({
              index,
              field: issue.path.length === 0 ? '(item)' : issue.path.join('.'),
              problem: issue.message,
            });
          }
          return;
        }
        const it = parsed.data;
        const tag = tags.get(it.tag);
        if (tag === undefined) {
          rejected.push({ index, field: 'tag', problem: `unknown tag ${JSON.stringify(it.tag)}` });
          return;
        }
        const time = new Date(typeof it.time === 'number' ? it.time : Date.parse(it.time));
        samples.push({ tagId: tag.id, time, value: it.value, quality: it.quality ?? QUALITY.good });
      });
      if (samples.length > 0) {
        try {
          await options.sink.write(samples);
          await options.sink.flush();
        } catch (error) {
          options.metrics?.error(errorMessage(error));
          // Nothing is acknowledged: the bridge sends the batch again, and the store keeps each (tag, time) once.
          return reply.code(503).send({
            code: 'INGEST_WRITE_FAILED',
            message: 'the samples could not be stored; send the batch again',
          });
        }
        options.metrics?.samples(samples);
      }
      options.metrics?.quarantined(rejected.length);
      const answer: PushAnswer = { accepted: samples.length, rejected };
      return reply.code(200).send(answer);
    },
  );
};
