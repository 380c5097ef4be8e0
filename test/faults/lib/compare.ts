/**
 * What was sent against what was stored: missing, doubled, altered (a different value at a
 * sent time) and extra (stored at a time never sent). The stored side is read in ONE place,
 * storedSamples(), so a change of storage (a sample_blocks table) changes one function.
 */
import type pg from 'pg';
import type { SentValue, Via } from './sent.js';

export interface StoredSample {
  readonly tag: string;
  readonly time: number;
  readonly value: number;
}

/**
 * Every stored sample of the given tags. Reads the samples table; when a sample_blocks
 * table exists (compressed blocks), the store's block reader must be used instead: this
 * function then reads samples and names the table in `note`, so the run says it is not
 * looking at the blocks (switch here).
 */
export async function storedSamples(
  pool: pg.Pool,
  tags: readonly string[],
): Promise<{ rows: StoredSample[]; note: string | undefined }> {
  const blocks = await pool.query<{ ok: boolean }>(`SELECT to_regclass('sample_blocks') IS NOT NULL AS ok`);
  const note =
    blocks.rows[0]?.ok === true
      ? 'a sample_blocks table exists: this run read the samples table only (switch storedSamples in test/faults/lib/compare.ts)'
      : undefined;
  const r = await pool.query<{ tag: string; ms: string; value: number }>(
    `SELECT t.name AS tag, (extract(epoch FROM s.time) * 1000)::bigint::text AS ms, s.value
       FROM samples s JOIN tags t ON t.id = s.tag_id
      WHERE t.name = ANY($1::text[])`,
    [tags],
  );
  return { rows: r.rows.map((row) => ({ tag: row.tag, time: Number(row.ms), value: row.value })), note };
}

export interface Comparison {
  sent: number;
  stored: number;
  missing: SentValue[];
  doubled: number;
  altered: { sent: SentValue; stored: number }[];
  extra: StoredSample[];
}

export function compare(sent: readonly SentValue[], stored: readonly StoredSample[]): Comparison {
  const byKey = new Map<string, number[]>();
  for (const s of stored) {
    const key = `${s.tag}|${s.time}`;
    const list = byKey.get(key);
    if (list === undefined) byKey.set(key, [s.value]);
    else list.push(s.value);
  }
  const out: Comparison = {
    sent: sent.length,
    stored: stored.length,
    missing: [],
    doubled: 0,
    altered: [],
    extra: [],
  };
  const sentKeys = new Set<string>();
  for (const v of sent) {
    const key = `${v.tag}|${v.time}`;
    sentKeys.add(key);
    const found = byKey.get(key);
    if (found === undefined) out.missing.push(v);
    else if (found[0] !== v.value) out.altered.push({ sent: v, stored: found[0] ?? Number.NaN });
  }
  for (const [key, values] of byKey) {
    if (values.length > 1) out.doubled += values.length - 1;
    if (!sentKeys.has(key)) {
      const [tag = '', time = '0'] = key.split('|');
      out.extra.push({ tag, time: Number(time), value: values[0] ?? Number.NaN });
    }
  }
  return out;
}

/** The sent values of one route. */
export function via(sent: readonly SentValue[], route: Via): SentValue[] {
  return sent.filter((v) => v.via === route);
}
