/** Job watermarks: how far a job has processed, per key (e.g. per machine id). */
import type { Queryable } from './errors.js';

export async function getWatermark(db: Queryable, job: string, key: string): Promise<Date | undefined> {
  const r = await db.query<{ watermark: Date }>(
    'SELECT watermark FROM job_watermarks WHERE job = $1 AND key = $2',
    [job, key],
  );
  return r.rows[0]?.watermark;
}

/** Sets the watermark exactly (a recomputation may move it back on purpose). */
export async function setWatermark(db: Queryable, job: string, key: string, watermark: Date): Promise<void> {
  await db.query(
    `INSERT INTO job_watermarks (job, key, watermark) VALUES ($1, $2, $3)
     ON CONFLICT (job, key) DO UPDATE SET watermark = excluded.watermark, updated_at = now()`,
    [job, key, watermark.toISOString()],
  );
}
