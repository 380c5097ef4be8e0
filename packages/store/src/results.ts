/** Computed results per machine and time: idempotent upsert and range reads. */
import type pg from 'pg';
import type { Queryable } from './errors.js';
import { ensurePartitions } from './partitions.js';

/** One result row; SI units as in migrations/0002_timeseries.sql. Absent figures are null. */
export interface ResultRow {
  readonly machineId: number;
  readonly time: Date;
  readonly pIn?: number | null;
  readonly tIn?: number | null;
  readonly hIn?: number | null;
  readonly sIn?: number | null;
  readonly pOut?: number | null;
  readonly tOut?: number | null;
  readonly hOut?: number | null;
  readonly sOut?: number | null;
  readonly tOutS?: number | null;
  readonly hOutS?: number | null;
  readonly massFlow?: number | null;
  readonly efficiency?: number | null;
  readonly uEfficiency?: number | null;
  readonly polytropicEfficiency?: number | null;
  readonly uPolytropicEfficiency?: number | null;
  readonly specificWork?: number | null;
  readonly uSpecificWork?: number | null;
  readonly power?: number | null;
  readonly uPower?: number | null;
  readonly entropyGeneration?: number | null;
  readonly uEntropyGeneration?: number | null;
  readonly operatingPoint?: number | null;
  readonly steady: boolean;
  readonly flags: readonly string[];
  readonly valid: boolean;
}

/** camelCase field -> column, for the nullable numeric figures. */
const NUMERIC = {
  pIn: 'p_in',
  tIn: 't_in',
  hIn: 'h_in',
  sIn: 's_in',
  pOut: 'p_out',
  tOut: 't_out',
  hOut: 'h_out',
  sOut: 's_out',
  tOutS: 't_out_s',
  hOutS: 'h_out_s',
  massFlow: 'mass_flow',
  efficiency: 'efficiency',
  uEfficiency: 'u_efficiency',
  polytropicEfficiency: 'polytropic_efficiency',
  uPolytropicEfficiency: 'u_polytropic_efficiency',
  specificWork: 'specific_work',
  uSpecificWork: 'u_specific_work',
  power: 'power',
  uPower: 'u_power',
  entropyGeneration: 'entropy_generation',
  uEntropyGeneration: 'u_entropy_generation',
  operatingPoint: 'operating_point',
} as const satisfies Partial<Record<keyof ResultRow, string>>;
type NumericField = keyof typeof NUMERIC;
const FIELDS = Object.keys(NUMERIC) as NumericField[];
const COLUMNS = FIELDS.map((f) => NUMERIC[f]);

/** Upserts rows on (machine_id, time): a recomputation replaces the earlier figures; the spans written are queued for the analysis job (analysis_pending). */
export async function writeResults(pool: pg.Pool, rows: readonly ResultRow[]): Promise<number> {
  if (rows.length === 0) return 0;
  const times = rows.map((r) => r.time.getTime());
  await ensurePartitions(pool, 'results', Math.min(...times), Math.max(...times));
  const records = rows.map((r) => {
    const rec: Record<string, unknown> = {
      machine_id: r.machineId,
      time: r.time.toISOString(),
      steady: r.steady,
      flags: r.flags,
      valid: r.valid,
    };
    // JSON has no NaN or Infinity: a non-finite figure is stored as null (absent), never as text.
    for (const f of FIELDS) {
      const v = r[f];
      rec[NUMERIC[f]] = typeof v === 'number' && Number.isFinite(v) ? v : null;
    }
    return rec;
  });
  const cols = ['machine_id', 'time', ...COLUMNS, 'steady', 'flags', 'valid'];
  const types = [
    'integer',
    'timestamptz',
    ...COLUMNS.map(() => 'double precision'),
    'boolean',
    'text[]',
    'boolean',
  ];
  const res = await pool.query<{ n: number }>(
    `WITH written AS (
     INSERT INTO results (${cols.join(', ')}, computed_at)
     SELECT ${cols.join(', ')}, now() FROM jsonb_to_recordset($1::jsonb) AS x(${cols.map((c, i) => `${c} ${types[i]}`).join(', ')})
     ON CONFLICT (machine_id, time) DO UPDATE SET ${[...COLUMNS, 'steady', 'flags', 'valid', 'computed_at']
       .map((c) => `${c} = excluded.${c}`)
       .join(', ')}
     RETURNING machine_id, time),
     queued AS (
       INSERT INTO analysis_pending (machine_id, from_time, to_time)
       SELECT machine_id, min(time), max(time) + interval '1 millisecond' FROM written GROUP BY machine_id)
     SELECT count(*)::int AS n FROM written`,
    [JSON.stringify(records)],
  );
  return res.rows[0]?.n ?? 0;
}

export interface StoredResult extends ResultRow {
  readonly computedAt: Date;
}

/** Results of one machine in [from, to), oldest first. */
export async function readResults(
  db: Queryable,
  machineId: number,
  from: Date,
  to: Date,
): Promise<StoredResult[]> {
  const res = await db.query<Record<string, unknown>>(
    `SELECT machine_id, time, ${COLUMNS.join(', ')}, steady, flags, valid, computed_at
       FROM results WHERE machine_id = $1 AND time >= $2 AND time < $3 ORDER BY time`,
    [machineId, from.toISOString(), to.toISOString()],
  );
  return res.rows.map((r) => {
    const out: Record<string, unknown> = {
      machineId: r.machine_id,
      time: r.time,
      steady: r.steady,
      flags: r.flags,
      valid: r.valid,
      computedAt: r.computed_at,
    };
    for (const f of FIELDS) out[f] = r[NUMERIC[f]];
    return out as unknown as StoredResult;
  });
}
