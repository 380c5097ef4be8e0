/**
 * A small idempotent sample writer against the samples table, used until (and wherever)
 * the store's SampleWriter is not handed in: COPY into a per-session staging table, then
 * INSERT ... ON CONFLICT (tag_id, time) DO NOTHING, so a batch sent again adds nothing.
 * It keeps tag_last; it does not maintain the rollup tables (the store's writer does).
 */
import type pg from 'pg';
import { from as copyFrom } from 'pg-copy-streams';
import { IngestError } from './errors.js';
import type { Sample, SampleSink, TagInfo, TagLookup } from './types.js';
import { tagLookupFrom } from './types.js';

const MONTH_LOCK = 'isentrope.partitions';
const knownPartitions = new WeakMap<pg.Pool, Set<string>>();

function monthStart(t: number): number {
  const d = new Date(t);
  return Date.UTC(d.getUTCFullYear(), d.getUTCMonth(), 1);
}

function nextMonth(t: number): number {
  const d = new Date(t);
  return Date.UTC(d.getUTCFullYear(), d.getUTCMonth() + 1, 1);
}

function partitionName(start: number): string {
  const d = new Date(start);
  return `samples_p${String(d.getUTCFullYear()).padStart(4, '0')}_${String(d.getUTCMonth() + 1).padStart(2, '0')}`;
}

/** A bad timestamp must not create hundreds of partitions (same guard as the store). */
const MAX_MONTHS = 400;

/**
 * Monthly partitions of samples over [from, to] [ms], named and locked as the store's
 * ensurePartitions does (packages/store/src/partitions.ts), so both can run side by side.
 */
export async function ensureSamplePartitions(pool: pg.Pool, from: number, to: number): Promise<void> {
  let cache = knownPartitions.get(pool);
  if (cache === undefined) {
    cache = new Set();
    knownPartitions.set(pool, cache);
  }
  const wanted: { name: string; start: number; end: number }[] = [];
  for (let s = monthStart(from); s <= to; s = nextMonth(s)) {
    const name = partitionName(s);
    if (!cache.has(name)) wanted.push({ name, start: s, end: nextMonth(s) });
    if (wanted.length > MAX_MONTHS) {
      throw new IngestError(
        'INGEST_WRITE_FAILED',
        `sample times span ${new Date(from).toISOString()} to ${new Date(to).toISOString()}: more than ${MAX_MONTHS} months; a timestamp is probably wrong`,
        { from, to },
      );
    }
  }
  if (wanted.length === 0) return;
  const client = await pool.connect();
  try {
    await client.query('BEGIN');
    await client.query('SELECT pg_advisory_xact_lock(hashtext($1))', [MONTH_LOCK]);
    for (const w of wanted) {
      await client.query(
        `CREATE TABLE IF NOT EXISTS ${w.name} PARTITION OF samples FOR VALUES FROM ('${new Date(w.start).toISOString()}') TO ('${new Date(w.end).toISOString()}')`,
      );
    }
    await client.query('COMMIT');
  } catch (error) {
    await client.query('ROLLBACK').catch(() => {});
    throw error;
  } finally {
    client.release();
  }
  for (const w of wanted) cache.add(w.name);
}

function copyText(samples: readonly Sample[]): string {
  let text = '';
  for (const s of samples) text += `${s.tagId}\t${s.time.toISOString()}\t${s.value}\t${s.quality}\n`;
  return text;
}

export class PgSampleSink implements SampleSink {
  constructor(private readonly pool: pg.Pool) {}

  async write(samples: readonly Sample[]): Promise<void> {
    if (samples.length === 0) return;
    let t0 = Number.POSITIVE_INFINITY;
    let t1 = Number.NEGATIVE_INFINITY;
    for (const s of samples) {
      const t = s.time.getTime();
      if (!Number.isFinite(t) || !Number.isFinite(s.value)) {
        throw new IngestError('INGEST_WRITE_FAILED', `sample for tag ${s.tagId} has a bad time or value`, {
          tagId: s.tagId,
          time: t,
          value: s.value,
        });
      }
      if (t < t0) t0 = t;
      if (t > t1) t1 = t;
    }
    await ensureSamplePartitions(this.pool, t0, t1);
    const client = await this.pool.connect();
    let broken = false;
    try {
      await client.query('BEGIN');
      await client.query(
        'CREATE TEMP TABLE IF NOT EXISTS ingest_stage (tag_id integer, time timestamptz, value float8, quality smallint) ON COMMIT DELETE ROWS',
      );
      await new Promise<void>((resolve, reject) => {
        const stream = client.query(copyFrom('COPY ingest_stage (tag_id, time, value, quality) FROM STDIN'));
        stream.on('error', reject);
        stream.on('finish', resolve);
        // Chunks of ~10k rows keep strings small for large batches.
        for (let i = 0; i < samples.length; i += 10_000) stream.write(copyText(samples.slice(i, i + 10_000)));
        stream.end();
      });
      await client.query(
        'INSERT INTO samples (tag_id, time, value, quality) SELECT tag_id, time, value, quality FROM ingest_stage ON CONFLICT (tag_id, time) DO NOTHING',
      );
      await client.query(
        `INSERT INTO tag_last (tag_id, time, value)
           SELECT DISTINCT ON (tag_id) tag_id, time, value FROM ingest_stage ORDER BY tag_id, time DESC
         ON CONFLICT (tag_id) DO UPDATE SET time = EXCLUDED.time, value = EXCLUDED.value WHERE EXCLUDED.time > tag_last.time`,
      );
      await client.query('COMMIT');
    } catch (error) {
      await client.query('ROLLBACK').catch(() => {
        broken = true;
      });
      throw new IngestError(
        'INGEST_WRITE_FAILED',
        `writing ${samples.length} samples failed: ${error instanceof Error ? error.message : String(error)}`,
        { count: samples.length },
        { cause: error },
      );
    } finally {
      client.release(broken);
    }
  }

  async flush(): Promise<void> {}
}

/** The site's live tags by name, read from the tags table. */
export async function loadTagLookup(pool: pg.Pool, siteSlug?: string): Promise<TagLookup> {
  const res = await pool.query<{ id: number; name: string; unit: string }>(
    `SELECT t.id, t.name, t.unit FROM tags t JOIN sites s ON s.id = t.site_id
      WHERE t.retired_at IS NULL AND ($1::text IS NULL OR s.slug = $1)`,
    [siteSlug ?? null],
  );
  return tagLookupFrom(res.rows.map((r): TagInfo => ({ id: r.id, name: r.name, unit: r.unit })));
}
