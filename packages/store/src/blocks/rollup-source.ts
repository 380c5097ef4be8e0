/**
 * Rollup rows recomputed from raw samples wherever they live (hot rows and blocks), for
 * rebuildRollups (rollup-rebuild.ts): SQL over `samples` alone would lose the packed history
 * of a range it rebuilds.
 */
import type { SampleRow } from '../copy-binary.js';
import { encodeBatchRollups } from '../rollups.js';
import { readSeries, type SeriesSource } from './read.js';

/** The samples of the tags in [fromMs, toMs) as rows sorted by (tag, time). */
export async function seriesRows(
  db: SeriesSource,
  tagIds: readonly number[],
  fromMs: number,
  toMs: number,
): Promise<SampleRow[]> {
  const rows: SampleRow[] = [];
  const series = await readSeries(
    db,
    [...tagIds].sort((a, b) => a - b),
    fromMs,
    toMs,
  );
  for (const [tagId, s] of [...series].sort((a, b) => a[0] - b[0]))
    for (let i = 0; i < s.times.length; i++)
      rows.push({
        tagId,
        time: s.times[i] as number,
        value: s.values[i] as number,
        quality: s.qualities[i] as number,
      });
  return rows;
}

/**
 * Binary COPY data for rollup_stage (ROLLUP_STAGE_DDL: minute rows, then hour rows) of the
 * tags' samples in [fromMs, toMs), to be inserted in place of the deleted buckets. Call inside
 * rebuildRollups' transaction (after its tag locks), so no batch or pack interleaves.
 */
export async function rollupStageFromSeries(
  db: SeriesSource,
  tagIds: readonly number[],
  fromMs: number,
  toMs: number,
): Promise<Buffer> {
  return encodeBatchRollups(await seriesRows(db, tagIds, fromMs, toMs));
}
