/**
 * readSeries: one ordered series per tag from the hot table and the decoded blocks, as if
 * every sample were still a row of `samples`. Every reader of raw samples goes through it
 * (trends, compute input, the API, the gauge/absolute median).
 */
import { decodeBlock } from '@isentrope/codec';
import pg from 'pg';
import {
  clip,
  concatColumns,
  EMPTY_COLUMNS,
  mergeDisjoint,
  type SeriesColumns,
  sortedByTime,
  toSeries,
  type UsColumns,
} from './columns.js';
import { READ_GUARD_SQL, takeReadGuard } from './locks.js';
import {
  checkSeriesArgs,
  decodeSeriesCopy,
  runCopyOut,
  type SeriesCopy,
  seriesCopySql,
} from './series-copy.js';

/** A pool, or a client inside a transaction (the read guard is held to its end). */
export type SeriesSource = pg.Pool | pg.ClientBase;

/** Reads the series COPY under the read guard (see locks.ts). */
export async function readSeriesCopy(
  db: SeriesSource,
  tagIds: readonly number[],
  fromMs: number,
  toMs: number,
): Promise<SeriesCopy> {
  const sql = seriesCopySql(tagIds, fromMs, toMs);
  if (!(db instanceof pg.Pool)) {
    await takeReadGuard(db);
    return decodeSeriesCopy(await runCopyOut(db, sql));
  }
  const client = await db.connect();
  try {
    // No JIT: a read over many monthly partitions passes jit_above_cost, and compiling costs
    // more than the read (services/api/src/queries/nojit.ts measured 13.7 s on a year).
    // One round trip for the three (constants only, so the simple protocol takes them together).
    await client.query(`BEGIN READ ONLY; SET LOCAL jit = off; ${READ_GUARD_SQL}`);
    const data = await runCopyOut(client, sql);
    await client.query('COMMIT');
    return decodeSeriesCopy(data);
  } catch (error) {
    await client.query('ROLLBACK').catch(() => {});
    throw error;
  } finally {
    client.release();
  }
}

/** One tag's hot columns and block payloads as one ordered series in [fromUs, toUs). */
export function assembleSeries(
  hot: UsColumns | undefined,
  payloads: readonly Uint8Array[] | undefined,
  fromUs: number,
  toUs: number,
): UsColumns {
  const h = hot === undefined ? EMPTY_COLUMNS : sortedByTime(hot);
  if (payloads === undefined || payloads.length === 0) return h;
  // Blocks of a tag never overlap: in order of their first time they concatenate in order.
  const parts = payloads
    .map((p) => decodeBlock(p))
    .filter((c) => c.times.length > 0)
    .sort((a, b) => (a.times[0] as number) - (b.times[0] as number))
    .map((c) => clip(c, fromUs, toUs));
  return mergeDisjoint(h, parts.length === 0 ? EMPTY_COLUMNS : concatColumns(parts));
}

/**
 * Samples of the given tags with fromMs <= time < toMs (±Infinity allowed), per tag in time
 * order, times [ms since the Unix epoch]; a tag with none is absent from the map.
 */
export async function readSeries(
  db: SeriesSource,
  tagIds: readonly number[],
  fromMs: number,
  toMs: number,
): Promise<Map<number, SeriesColumns>> {
  checkSeriesArgs(tagIds, fromMs, toMs);
  const out = new Map<number, SeriesColumns>();
  if (tagIds.length === 0 || !(toMs > fromMs)) return out;
  const copy = await readSeriesCopy(db, tagIds, fromMs, toMs);
  const fromUs = fromMs * 1000;
  const toUs = toMs * 1000;
  for (const tag of tagIds) {
    const s = assembleSeries(copy.hot.get(tag), copy.blocks.get(tag), fromUs, toUs);
    if (s.times.length > 0) out.set(tag, toSeries(s));
  }
  return out;
}
