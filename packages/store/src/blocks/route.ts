/**
 * Late and repeated samples for packed ranges, in the sample writer's transaction after it
 * took the per-tag advisory locks (TAG_LOCK_CLASS): routePackedRows tells which rows fall
 * inside a stored block (first_time <= time <= last_time of a block of their tag), and
 * mergeIntoBlocks decodes each such block, merges its rows (first value kept, see merge.ts),
 * re-encodes it and merges the really new rows into the rollups. The pack job decides under
 * the same locks, so a key is hot or packed, never both, and a re-sent batch stores nothing
 * twice.
 */
import { decodeBlock } from '@isentrope/codec';
import type pg from 'pg';
import type { SampleRow } from '../copy-binary.js';
import { StoreError } from '../errors.js';
import { COPY_ROLLUP_STAGE, encodeBatchRollups, MERGE_ROLLUP_STAGE, ROLLUP_STAGE_DDL } from '../rollups.js';
import { type BlockRow, blockRow } from './block-rows.js';
import { copyIn } from './copy-in.js';
import { type BlockWriteConflict, mergeRowsIntoColumns, type RefRow } from './merge.js';

interface BlockSpan {
  readonly tagId: number;
  readonly firstUs: number;
  readonly lastUs: number;
  /** first_time as the server printed it (the key, exactly). */
  readonly key: string;
  readonly payload?: Buffer;
}

/** Per tag of rows sorted by (tag, time): the tag, its first and last time as ISO text. */
function tagRanges(rows: readonly SampleRow[]): { tags: number[]; lo: string[]; hi: string[] } {
  const out = { tags: [] as number[], lo: [] as string[], hi: [] as string[] };
  for (let i = 0; i < rows.length; i++) {
    const r = rows[i]!;
    if (i === 0 || rows[i - 1]!.tagId !== r.tagId) {
      out.tags.push(r.tagId);
      out.lo.push(new Date(r.time).toISOString());
    }
    if (i === rows.length - 1 || rows[i + 1]!.tagId !== r.tagId)
      out.hi.push(new Date(Math.ceil(r.time)).toISOString());
  }
  return out;
}

/** Blocks of the rows' tags overlapping each tag's time range, in (tag, first_time) order. */
async function blocksOver(
  client: pg.ClientBase,
  rows: readonly SampleRow[],
  withPayload: boolean,
): Promise<BlockSpan[]> {
  if (rows.length === 0) return [];
  const r = tagRanges(rows);
  const res = await client.query<{ tag_id: number; f: string; l: string; key: string; payload?: Buffer }>(
    `SELECT b.tag_id, (extract(epoch FROM b.first_time) * 1000000)::float8::text AS f,
            (extract(epoch FROM b.last_time) * 1000000)::float8::text AS l, b.first_time::text AS key
            ${withPayload ? ', b.payload' : ''}
       FROM unnest($1::int[], $2::timestamptz[], $3::timestamptz[]) AS q(tag_id, lo, hi)
       JOIN sample_blocks b ON b.tag_id = q.tag_id AND b.last_time >= q.lo AND b.first_time <= q.hi
      ORDER BY b.tag_id, b.first_time`,
    [r.tags, r.lo, r.hi],
  );
  return res.rows.map((b) => ({
    tagId: b.tag_id,
    firstUs: Number(b.f),
    lastUs: Number(b.l),
    key: b.key,
    ...(b.payload === undefined ? {} : { payload: b.payload }),
  }));
}

/**
 * Walks rows (sorted by tag, time) against blocks (sorted by tag, first time): calls
 * `visit` with each row and the index of the block holding its time, or -1.
 */
function eachRowInBlocks(
  rows: readonly SampleRow[],
  blocks: readonly BlockSpan[],
  visit: (row: SampleRow, block: number) => void,
): void {
  let k = 0;
  for (const row of rows) {
    const us = row.time * 1000;
    while (
      k < blocks.length &&
      (blocks[k]!.tagId < row.tagId || (blocks[k]!.tagId === row.tagId && blocks[k]!.lastUs < us))
    )
      k++;
    const b = blocks[k];
    visit(row, b !== undefined && b.tagId === row.tagId && b.firstUs <= us ? k : -1);
  }
}

/** Splits rows sorted by (tag, time) into those for the hot table and those inside a stored block. */
export async function routePackedRows<R extends SampleRow>(
  client: pg.ClientBase,
  rows: readonly R[],
): Promise<{ hot: R[]; packed: R[] }> {
  const blocks = await blocksOver(client, rows, false);
  if (blocks.length === 0) return { hot: [...rows], packed: [] };
  const hot: R[] = [];
  const packed: R[] = [];
  eachRowInBlocks(rows, blocks, (row, b) => (b < 0 ? hot : packed).push(row as R));
  return { hot, packed };
}

export interface MergeOutcome {
  /** Rows new to the database. */
  stored: number;
  duplicates: number;
  /** The refs of the duplicate rows that carry one. */
  duplicateRefs: number[];
  conflicts: BlockWriteConflict[];
}

/**
 * Merges rows that routePackedRows found packed (sorted by tag, time) into their blocks, in
 * the caller's transaction under the per-tag locks; the new rows also go into the rollups
 * unless `rollups` is false.
 */
export async function mergeIntoBlocks(
  client: pg.ClientBase,
  packed: readonly RefRow[],
  options: { rollups?: boolean } = {},
): Promise<MergeOutcome> {
  const out: MergeOutcome = { stored: 0, duplicates: 0, duplicateRefs: [], conflicts: [] };
  if (packed.length === 0) return out;
  const blocks = await blocksOver(client, packed, true);
  const groups = new Map<number, RefRow[]>();
  eachRowInBlocks(packed, blocks, (row, b) => {
    if (b < 0)
      throw new StoreError(
        'STORE_WRITE_FAILED',
        `tag ${row.tagId}: no block holds ${new Date(row.time).toISOString()}; route the rows first (routePackedRows)`,
        {
          tagId: row.tagId,
          time: row.time,
        },
      );
    const g = groups.get(b);
    if (g === undefined) groups.set(b, [row]);
    else g.push(row);
  });
  const updated: { key: string; row: BlockRow }[] = [];
  const newRows: RefRow[] = [];
  for (const [b, rows] of groups) {
    const span = blocks[b]!;
    const m = mergeRowsIntoColumns(decodeBlock(span.payload!), rows);
    out.duplicates += m.duplicates;
    for (const ref of m.duplicateRefs) out.duplicateRefs.push(ref);
    out.conflicts.push(...m.conflicts);
    if (m.stored.length === 0) continue;
    newRows.push(...m.stored);
    updated.push({ key: span.key, row: blockRow(span.tagId, m.columns) });
  }
  out.stored = newRows.length;
  if (updated.length === 0) return out;
  // The block keeps its key: every merged row lies within [first_time, last_time].
  await client.query(
    `UPDATE sample_blocks b SET sample_count = u.n, min_value = u.mn, max_value = u.mx, sum_value = u.s, payload = u.p
       FROM unnest($1::int[], $2::timestamptz[], $3::int[], $4::float8[], $5::float8[], $6::float8[], $7::bytea[]) AS u(tag_id, first_time, n, mn, mx, s, p)
      WHERE b.tag_id = u.tag_id AND b.first_time = u.first_time`,
    [
      updated.map((u) => u.row.tagId),
      updated.map((u) => u.key),
      updated.map((u) => u.row.count),
      updated.map((u) => u.row.min ?? null),
      updated.map((u) => u.row.max ?? null),
      updated.map((u) => u.row.sum ?? null),
      updated.map((u) =>
        Buffer.from(u.row.payload.buffer, u.row.payload.byteOffset, u.row.payload.byteLength),
      ),
    ],
  );
  if (options.rollups ?? true) await mergeRollups(client, newRows);
  return out;
}

/** The new rows' aggregates merged into samples_1m and samples_1h, as the writer's staging path does. */
async function mergeRollups(client: pg.ClientBase, rows: RefRow[]): Promise<void> {
  rows.sort((a, b) => a.tagId - b.tagId || a.time - b.time);
  await client.query(ROLLUP_STAGE_DDL);
  await copyIn(client, COPY_ROLLUP_STAGE, encodeBatchRollups(rows));
  await client.query(MERGE_ROLLUP_STAGE);
  await client.query('TRUNCATE rollup_stage');
}
