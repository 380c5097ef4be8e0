/**
 * Results writer and watermarks. `writeResults` is an idempotent upsert on (machine_id, time)
 * through unnest arrays (one statement per batch; works the same on every PostgreSQL).
 * Written here until packages/store exports its own writer.
 */
import { once } from 'node:events';
import type pg from 'pg';
import { from as copyFrom } from 'pg-copy-streams';
import type { ResultRow } from '../compute/pipeline.js';
import { JobsError } from '../errors.js';
import type { Queryable } from './machines.js';

const NUM_COLUMNS = [
  ['p_in', 'pIn'],
  ['t_in', 'tIn'],
  ['h_in', 'hIn'],
  ['s_in', 'sIn'],
  ['p_out', 'pOut'],
  ['t_out', 'tOut'],
  ['h_out', 'hOut'],
  ['s_out', 'sOut'],
  ['t_out_s', 'tOutS'],
  ['h_out_s', 'hOutS'],
  ['mass_flow', 'massFlow'],
  ['efficiency', 'efficiency'],
  ['u_efficiency', 'uEfficiency'],
  ['polytropic_efficiency', 'polytropicEfficiency'],
  ['u_polytropic_efficiency', 'uPolytropicEfficiency'],
  ['specific_work', 'specificWork'],
  ['u_specific_work', 'uSpecificWork'],
  ['power', 'power'],
  ['u_power', 'uPower'],
  ['entropy_generation', 'entropyGeneration'],
  ['u_entropy_generation', 'uEntropyGeneration'],
  ['operating_point', 'operatingPoint'],
] as const satisfies readonly (readonly [string, keyof ResultRow])[];

/** Monthly partitions of `results`, named as packages/store names them (results_pYYYY_MM). */
const knownPartitions = new WeakMap<object, Set<string>>();

export async function ensureResultPartitions(pool: pg.Pool, fromMs: number, toMs: number): Promise<void> {
  let known = knownPartitions.get(pool);
  if (known === undefined) {
    known = new Set();
    knownPartitions.set(pool, known);
  }
  const d = new Date(fromMs);
  for (
    let k = d.getUTCFullYear() * 12 + d.getUTCMonth();
    Date.UTC(Math.floor(k / 12), k % 12, 1) <= toMs;
    k++
  ) {
    const y = Math.floor(k / 12);
    const m = k % 12;
    const name = `results_p${String(y).padStart(4, '0')}_${String(m + 1).padStart(2, '0')}`;
    if (known.has(name)) continue;
    const start = new Date(Date.UTC(y, m, 1)).toISOString();
    const end = new Date(Date.UTC(y, m + 1, 1)).toISOString();
    const client = await pool.connect();
    try {
      await client.query('BEGIN');
      // The store's lock for partition DDL, so writers never collide on the catalog.
      await client.query('SELECT pg_advisory_xact_lock(hashtext($1))', ['isentrope.partitions']);
      await client.query(
        `CREATE TABLE IF NOT EXISTS ${name} PARTITION OF results FOR VALUES FROM ('${start}') TO ('${end}')`,
      );
      await client.query('COMMIT');
    } catch (error) {
      await client.query('ROLLBACK').catch(() => {});
      throw error;
    } finally {
      client.release();
    }
    known.add(name);
  }
}

/** Upsert result rows (partitions must exist: ensureResultPartitions). */
export async function writeResults(db: Queryable, rows: readonly ResultRow[]): Promise<void> {
  const batch = 5000;
  for (let k = 0; k < rows.length; k += batch) {
    const part = rows.slice(k, k + batch);
    const values: unknown[] = [part.map((r) => r.machineId), part.map((r) => r.time)];
    // Non-finite figures are stored as NULL, as the COPY path stores them.
    for (const [, key] of NUM_COLUMNS)
      values.push(part.map((r) => (r[key] !== null && Number.isFinite(r[key]) ? r[key] : null)));
    values.push(part.map((r) => r.steady));
    // text[][] cannot be ragged: flags travel as one '|'-joined text per row.
    values.push(part.map((r) => r.flags.join('|')));
    values.push(part.map((r) => r.valid));
    const n = NUM_COLUMNS.length;
    const cols = NUM_COLUMNS.map(([c]) => c);
    const args = NUM_COLUMNS.map((_, i) => `$${i + 3}::float8[]`);
    await db.query(
      `INSERT INTO results (machine_id, time, ${cols.join(', ')}, steady, flags, valid, computed_at)
       SELECT u.m, to_timestamp(u.t / 1000), ${cols.map((_, i) => `u.c${i}`).join(', ')}, u.steady,
              CASE WHEN u.flags = '' THEN '{}'::text[] ELSE string_to_array(u.flags, '|') END, u.valid, now()
         FROM unnest($1::int[], $2::float8[], ${args.join(', ')}, $${n + 3}::boolean[], $${n + 4}::text[], $${n + 5}::boolean[])
           AS u(m, t, ${cols.map((_, i) => `c${i}`).join(', ')}, steady, flags, valid)
       ON CONFLICT (machine_id, time) DO UPDATE SET
         ${cols.map((c) => `${c} = EXCLUDED.${c}`).join(', ')},
         steady = EXCLUDED.steady, flags = EXCLUDED.flags, valid = EXCLUDED.valid, computed_at = EXCLUDED.computed_at`,
      values,
    );
  }
}

/** Milliseconds from the Unix epoch to PostgreSQL's timestamp epoch (2000-01-01 UTC). */
const PG_EPOCH_MS = 946_684_800_000;
/** Object id of the text type (pg_type), the element type of the flags array. */
const TEXT_OID = 25;
const COPY_SIGNATURE = Buffer.from('PGCOPY\n\xff\r\n\0', 'latin1');
const FIELDS = 2 + NUM_COLUMNS.length + 4;

/**
 * Rows in PostgreSQL's binary COPY format (PostgreSQL documentation, COPY, "Binary Format"):
 * per tuple an int16 field count, then per field an int32 length (-1 = NULL) and the value in the
 * type's binary send form (int4; timestamptz as int8 microseconds since 2000-01-01; float8; bool
 * as one byte; text[] as ndim, has-null, element type oid, then size and lower bound per
 * dimension and length-prefixed UTF-8 elements), all big-endian. Written through a DataView
 * (DataView setters are big-endian by default and several times cheaper than Buffer's
 * writeXxxBE per field, measured); each distinct flag set is encoded once and copied after.
 */
class CopyEncoder {
  private buf = Buffer.allocUnsafe(1 << 20);
  private view = new DataView(this.buf.buffer, this.buf.byteOffset, this.buf.byteLength);
  private at = 0;
  /** A flags field (length word and array) per distinct '|'-joined flag set. */
  private readonly flagFields = new Map<string, Buffer>();

  private need(n: number): void {
    if (this.at + n <= this.buf.length) return;
    const next = Buffer.allocUnsafe(Math.max(this.buf.length * 2, this.at + n));
    this.buf.copy(next, 0, 0, this.at);
    this.buf = next;
    this.view = new DataView(next.buffer, next.byteOffset, next.byteLength);
  }

  header(): void {
    this.need(19);
    COPY_SIGNATURE.copy(this.buf, this.at);
    this.at += COPY_SIGNATURE.length;
    this.view.setInt32(this.at, 0); // flags: no OIDs
    this.view.setInt32(this.at + 4, 0); // header extension length
    this.at += 8;
  }

  /** The text[] field of a flag set, length word included. */
  private flagField(flags: readonly string[]): Buffer {
    const key = flags.join('|');
    let field = this.flagFields.get(key);
    if (field !== undefined) return field;
    const elements = flags.map((f) => Buffer.from(f, 'utf8'));
    const ndim = elements.length === 0 ? 0 : 1;
    let size = 12 + ndim * 8;
    for (const e of elements) size += 4 + e.length;
    field = Buffer.allocUnsafe(4 + size);
    let o = field.writeInt32BE(size, 0);
    o = field.writeInt32BE(ndim, o);
    o = field.writeInt32BE(0, o); // no NULL elements
    o = field.writeInt32BE(TEXT_OID, o);
    if (ndim === 1) {
      o = field.writeInt32BE(elements.length, o);
      o = field.writeInt32BE(1, o); // lower bound
      for (const e of elements) {
        o = field.writeInt32BE(e.length, o);
        o += e.copy(field, o);
      }
    }
    this.flagFields.set(key, field);
    return field;
  }

  row(r: ResultRow, computedAtUs: number): void {
    const flags = this.flagField(r.flags);
    this.need(2 + 8 + 12 + NUM_COLUMNS.length * 12 + 5 + flags.length + 5 + 12);
    const v = this.view;
    let o = this.at;
    v.setInt16(o, FIELDS);
    v.setInt32(o + 2, 4);
    v.setInt32(o + 6, r.machineId);
    o = timestamp(v, o + 10, (r.time - PG_EPOCH_MS) * 1000);
    // Field by field in NUM_COLUMNS order: named reads stay monomorphic (a keyed loop does not).
    o = float8(v, o, r.pIn);
    o = float8(v, o, r.tIn);
    o = float8(v, o, r.hIn);
    o = float8(v, o, r.sIn);
    o = float8(v, o, r.pOut);
    o = float8(v, o, r.tOut);
    o = float8(v, o, r.hOut);
    o = float8(v, o, r.sOut);
    o = float8(v, o, r.tOutS);
    o = float8(v, o, r.hOutS);
    o = float8(v, o, r.massFlow);
    o = float8(v, o, r.efficiency);
    o = float8(v, o, r.uEfficiency);
    o = float8(v, o, r.polytropicEfficiency);
    o = float8(v, o, r.uPolytropicEfficiency);
    o = float8(v, o, r.specificWork);
    o = float8(v, o, r.uSpecificWork);
    o = float8(v, o, r.power);
    o = float8(v, o, r.uPower);
    o = float8(v, o, r.entropyGeneration);
    o = float8(v, o, r.uEntropyGeneration);
    o = float8(v, o, r.operatingPoint);
    v.setInt32(o, 1);
    v.setUint8(o + 4, r.steady ? 1 : 0);
    o += 5;
    this.buf.set(flags, o);
    o += flags.length;
    v.setInt32(o, 1);
    v.setUint8(o + 4, r.valid ? 1 : 0);
    this.at = timestamp(v, o + 5, computedAtUs);
  }

  trailer(): void {
    this.need(2);
    this.view.setInt16(this.at, -1);
    this.at += 2;
  }

  get size(): number {
    return this.at;
  }

  /** The bytes so far; the encoder goes on in a fresh buffer (handing over beats copying). */
  take(): Buffer {
    const out = this.buf.subarray(0, this.at);
    this.buf = Buffer.allocUnsafe(this.buf.length);
    this.view = new DataView(this.buf.buffer, this.buf.byteOffset, this.buf.byteLength);
    this.at = 0;
    return out;
  }
}

/** A float8 field at o (NULL for null and non-finite values); returns the next offset. */
function float8(v: DataView, o: number, x: number | null): number {
  if (x === null || !Number.isFinite(x)) {
    v.setInt32(o, -1);
    return o + 4;
  }
  v.setInt32(o, 8);
  v.setFloat64(o + 4, x);
  return o + 12;
}

/** A timestamptz field at o: length 8, then int8 microseconds as two 32-bit halves (exact below 2^53). */
function timestamp(v: DataView, o: number, us: number): number {
  const x = Math.round(us);
  const hi = Math.floor(x / 4_294_967_296);
  v.setInt32(o, 8);
  v.setInt32(o + 4, hi);
  v.setUint32(o + 8, x - hi * 4_294_967_296);
  return o + 12;
}

/**
 * Replace one machine's results in [fromMs, toMs) by `rows` (all of that machine and range): a
 * DELETE of the range and a binary COPY in one transaction, the fast path of a backfill. When a
 * concurrent writer got there first (unique violation) the rows go through the upsert instead.
 */
export async function replaceResultsRange(
  pool: pg.Pool,
  machineId: number,
  fromMs: number,
  toMs: number,
  rows: readonly ResultRow[],
): Promise<void> {
  // Checked before the transaction: an error thrown mid-COPY would leave the stream open.
  for (const r of rows) {
    if (r.machineId !== machineId || !(r.time >= fromMs && r.time < toMs))
      throw new JobsError(
        'JOBS_BAD_RANGE',
        'a result row lies outside the machine and range being replaced',
        {
          machineId,
          fromMs,
          toMs,
          rowMachineId: r.machineId,
          rowTime: r.time,
        },
      );
  }
  const client = await pool.connect();
  let fallback = false;
  try {
    await client.query('BEGIN');
    await client.query(
      `DELETE FROM results WHERE machine_id = $1 AND time >= to_timestamp($2::float8 / 1000) AND time < to_timestamp($3::float8 / 1000)`,
      [machineId, fromMs, toMs],
    );
    const cols = NUM_COLUMNS.map(([c]) => c).join(', ');
    const stream = client.query(
      copyFrom(
        `COPY results (machine_id, time, ${cols}, steady, flags, valid, computed_at) FROM STDIN (FORMAT binary)`,
      ),
    );
    const done = new Promise<void>((resolve, reject) => {
      stream.on('finish', resolve);
      stream.on('error', reject);
    });
    try {
      const enc = new CopyEncoder();
      enc.header();
      const nowUs = (Date.now() - PG_EPOCH_MS) * 1000;
      for (const r of rows) {
        enc.row(r, nowUs);
        if (enc.size > 1 << 20 && !stream.write(enc.take())) await once(stream, 'drain');
      }
      enc.trailer();
      stream.end(enc.take());
    } catch (error) {
      // CopyFail ends the COPY, so the ROLLBACK below is not queued behind it for ever.
      stream.destroy(error instanceof Error ? error : new Error(String(error)));
      await done.catch(() => {});
      throw error;
    }
    await done;
    await client.query('COMMIT');
  } catch (error) {
    await client.query('ROLLBACK').catch(() => {});
    // 23505 unique_violation: another writer committed rows of this range meanwhile.
    if ((error as { code?: unknown }).code === '23505') fallback = true;
    else throw error;
  } finally {
    client.release();
  }
  if (fallback) await writeResults(pool, rows);
}

/** Result rows of a machine in [from, to) as ResultRow (for comparisons, the alert job and tests). */
export async function readResults(
  db: Queryable,
  machineId: number,
  fromMs: number,
  toMs: number,
): Promise<ResultRow[]> {
  const cols = NUM_COLUMNS.map(([c, k]) => `${c} AS "${k}"`).join(', ');
  const res = await db.query<ResultRow>(
    `SELECT machine_id AS "machineId", (extract(epoch FROM time) * 1000)::float8 AS time, ${cols}, steady, flags, valid
       FROM results WHERE machine_id = $1 AND time >= to_timestamp($2::float8 / 1000) AND time < to_timestamp($3::float8 / 1000)
      ORDER BY time`,
    [machineId, fromMs, toMs],
  );
  return res.rows;
}

/** Compute watermark of a machine and the config hash it was computed with. */
export interface ComputeWatermark {
  readonly watermarkMs: number;
  readonly configHash: string;
}

/**
 * The compute watermark is stored in job_watermarks as job 'compute', key '<machine id>#<config
 * hash>': the table has no column for the hash, and a key that carries it makes a config change
 * visible with no schema change.
 */
export async function readComputeWatermark(
  db: Queryable,
  machineId: number,
): Promise<ComputeWatermark | undefined> {
  const res = await db.query<{ key: string; w: number }>(
    `SELECT key, (extract(epoch FROM watermark) * 1000)::float8 AS w FROM job_watermarks
      WHERE job = 'compute' AND split_part(key, '#', 1) = $1`,
    [String(machineId)],
  );
  const row = res.rows[0];
  if (row === undefined) return undefined;
  return { watermarkMs: row.w, configHash: row.key.split('#')[1] ?? '' };
}

export async function writeComputeWatermark(
  db: Queryable,
  machineId: number,
  configHash: string,
  watermarkMs: number,
): Promise<void> {
  await db.query(
    `DELETE FROM job_watermarks WHERE job = 'compute' AND split_part(key, '#', 1) = $1 AND key <> $2`,
    [String(machineId), `${machineId}#${configHash}`],
  );
  await db.query(
    `INSERT INTO job_watermarks (job, key, watermark, updated_at) VALUES ('compute', $1, to_timestamp($2::float8 / 1000), now())
     ON CONFLICT (job, key) DO UPDATE SET watermark = EXCLUDED.watermark, updated_at = now()`,
    [`${machineId}#${configHash}`, watermarkMs],
  );
}

/** A generic watermark (job, key) [ms]. */
export async function readWatermark(db: Queryable, job: string, key: string): Promise<number | undefined> {
  const res = await db.query<{ w: number }>(
    `SELECT (extract(epoch FROM watermark) * 1000)::float8 AS w FROM job_watermarks WHERE job = $1 AND key = $2`,
    [job, key],
  );
  return res.rows[0]?.w;
}

export async function writeWatermark(db: Queryable, job: string, key: string, ms: number): Promise<void> {
  await db.query(
    `INSERT INTO job_watermarks (job, key, watermark, updated_at) VALUES ($1, $2, to_timestamp($3::float8 / 1000), now())
     ON CONFLICT (job, key) DO UPDATE SET watermark = EXCLUDED.watermark, updated_at = now()`,
    [job, key, ms],
  );
}

/** Compute watermarks of every machine (or the given ones), in one query. */
export async function readComputeWatermarks(
  db: Queryable,
  machineIds?: readonly number[],
): Promise<Map<number, ComputeWatermark>> {
  const res = await db.query<{ key: string; w: number }>(
    `SELECT key, (extract(epoch FROM watermark) * 1000)::float8 AS w FROM job_watermarks
      WHERE job = 'compute' AND ($1::text[] IS NULL OR split_part(key, '#', 1) = ANY($1::text[]))`,
    [machineIds === undefined ? null : machineIds.map(String)],
  );
  const out = new Map<number, ComputeWatermark>();
  for (const row of res.rows) {
    const [id, hash] = row.key.split('#');
    const machineId = Number(id);
    if (Number.isInteger(machineId)) out.set(machineId, { watermarkMs: row.w, configHash: hash ?? '' });
  }
  return out;
}

/** Several compute watermarks in two statements (see writeComputeWatermark). */
export async function writeComputeWatermarks(
  db: Queryable,
  marks: readonly { readonly machineId: number; readonly configHash: string; readonly watermarkMs: number }[],
): Promise<void> {
  if (marks.length === 0) return;
  const keys = marks.map((m) => `${m.machineId}#${m.configHash}`);
  await db.query(
    `DELETE FROM job_watermarks WHERE job = 'compute' AND split_part(key, '#', 1) = ANY($1::text[]) AND NOT (key = ANY($2::text[]))`,
    [marks.map((m) => String(m.machineId)), keys],
  );
  await db.query(
    `INSERT INTO job_watermarks (job, key, watermark, updated_at)
     SELECT 'compute', u.k, to_timestamp(u.w / 1000), now() FROM unnest($1::text[], $2::float8[]) AS u(k, w)
     ON CONFLICT (job, key) DO UPDATE SET watermark = EXCLUDED.watermark, updated_at = now()`,
    [keys, marks.map((m) => m.watermarkMs)],
  );
}
