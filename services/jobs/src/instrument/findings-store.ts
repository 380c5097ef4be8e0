/**
 * The stored instrument findings (migrations/0005_instrument_findings.sql): read by the compute
 * pass, which flags the rows they cover (packages/compute findings.ts), and kept by the
 * instrument step (gauge-absolute.ts).
 */
import {
  type FindingFlag,
  type FindingStatus,
  findingFlags,
  GAUGE_ABSOLUTE_FAULT,
  type KnownFinding,
  type NewFinding,
  type PressureRole,
} from '@isentrope/compute';
import type { Queryable } from '../queries/machines.js';

interface FindingDb {
  machine_id: number;
  role: PressureRole;
  at: number;
  ended_at: number | null;
  status: FindingStatus;
}

/** The flag intervals of the stored findings, per machine (every machine, or the given ones). */
export async function readFindingFlags(
  db: Queryable,
  machineIds?: readonly number[],
): Promise<Map<number, FindingFlag[]>> {
  const r = await db.query<FindingDb>(
    `SELECT machine_id, role, (extract(epoch FROM at) * 1000)::float8 AS at,
            (extract(epoch FROM ended_at) * 1000)::float8 AS ended_at, status
       FROM instrument_findings
      WHERE status <> 'dismissed' AND ($1::int[] IS NULL OR machine_id = ANY($1::int[]))
      ORDER BY machine_id, at`,
    [machineIds ?? null],
  );
  const out = new Map<number, FindingFlag[]>();
  for (const row of r.rows) {
    const flags = findingFlags([{ role: row.role, at: row.at, endedAt: row.ended_at, status: row.status }]);
    const list = out.get(row.machine_id);
    if (list === undefined) out.set(row.machine_id, flags);
    else list.push(...flags);
  }
  return out;
}

/** A machine's stored gauge/absolute findings of one role, locked for the step's transaction. */
export async function lockFindings(
  db: Queryable,
  machineId: number,
  role: PressureRole,
): Promise<KnownFinding[]> {
  const r = await db.query<{ id: number; at: number; ended_at: number | null; status: FindingStatus }>(
    `SELECT id::int, (extract(epoch FROM at) * 1000)::float8 AS at,
            (extract(epoch FROM ended_at) * 1000)::float8 AS ended_at, status
       FROM instrument_findings WHERE machine_id = $1 AND role = $2 AND kind = $3 ORDER BY at FOR UPDATE`,
    [machineId, role, GAUGE_ABSOLUTE_FAULT],
  );
  return r.rows.map((s) => ({ id: s.id, at: s.at, endedAt: s.ended_at, status: s.status }));
}

export async function endFinding(db: Queryable, id: number, endedAtMs: number): Promise<void> {
  await db.query(
    `UPDATE instrument_findings SET status = 'reverted', ended_at = to_timestamp($2::float8 / 1000) WHERE id = $1`,
    [id, endedAtMs],
  );
}

/** Stores a new finding; false when it was stored already (same machine, role, kind and time). */
export async function insertFinding(
  db: Queryable,
  target: { machineId: number; tagId: number; role: PressureRole; ambient: number },
  n: NewFinding,
): Promise<boolean> {
  const f = n.finding;
  const r = await db.query(
    `INSERT INTO instrument_findings (machine_id, tag_id, role, kind, at, ended_at, status, direction, likely_cause,
                                      shift_pa, shift_ambients, level_before_pa, level_after_pa, ambient_pa,
                                      cross_check, cross_check_detail)
     VALUES ($1, $2, $3, $4, to_timestamp($5::float8 / 1000), to_timestamp($6::float8 / 1000), $7, $8, $9,
             $10, $11, $12, $13, $14, $15, $16)
     ON CONFLICT (machine_id, role, kind, at) DO NOTHING`,
    [
      target.machineId,
      target.tagId,
      target.role,
      GAUGE_ABSOLUTE_FAULT,
      f.at,
      n.endedAt,
      n.status,
      f.direction,
      f.likelyCause,
      f.shift,
      f.shiftInAmbients,
      f.levelBefore,
      f.levelAfter,
      target.ambient,
      n.check.verdict,
      JSON.stringify(n.check.detail),
    ],
  );
  return (r.rowCount ?? 0) > 0;
}
