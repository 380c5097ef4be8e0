/**
 * Daily drift means on local days: the day bounds come from the pure calendar
 * (packages/monitor localDays, the site's zone), so a 23- or 25-hour day is one day, and the
 * database only sorts results into them (width_bucket over the bounds), whatever its own time-zone
 * data says.
 */
import type { LocalDay } from '@isentrope/monitor';
import type { Queryable } from '@isentrope/store';
import { USABLE_RESULT_SQL } from '../analysis/baseline.js';

/** Means of drift [%-points] over usable results per local day with at least minPoints; t is the day's mid-point [ms]. */
export async function localDailyDriftMeans(
  db: Queryable,
  machineId: number,
  days: readonly LocalDay[],
  minPoints: number,
): Promise<{ t: number[]; driftPts: number[]; n: number[] }> {
  const first = days[0];
  const last = days.at(-1);
  if (first === undefined || last === undefined) return { t: [], driftPts: [], n: [] };
  const bounds = [first.fromMs, ...days.map((d) => d.toMs)].map((ms) => new Date(ms).toISOString());
  const res = await db.query<{ k: number; drift: number; n: number }>(
    `SELECT width_bucket(time, $2::timestamptz[]) AS k, avg(drift) AS drift, count(drift)::int AS n
       FROM results
      WHERE machine_id = $1 AND time >= $3::timestamptz AND time < $4::timestamptz
        AND drift IS NOT NULL AND ${USABLE_RESULT_SQL}
      GROUP BY 1 HAVING count(drift) >= $5 ORDER BY 1`,
    [machineId, bounds, bounds[0], bounds.at(-1), minPoints],
  );
  const out = { t: [] as number[], driftPts: [] as number[], n: [] as number[] };
  for (const r of res.rows) {
    // Bucket k (1-based) holds [bounds[k-1], bounds[k]), day k-1.
    const day = days[r.k - 1];
    if (day === undefined) continue;
    out.t.push((day.fromMs + day.toMs) / 2);
    out.driftPts.push(r.drift);
    out.n.push(r.n);
  }
  return out;
}
