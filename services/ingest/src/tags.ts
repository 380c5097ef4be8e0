import type pg from 'pg';
import { type TagInfo, type TagLookup, tagLookupFrom } from './types.js';

/** The live (not retired) tags by name, read from the tags table; of one site when siteSlug is given. */
export async function loadTagLookup(pool: pg.Pool, siteSlug?: string): Promise<TagLookup> {
  const res = await pool.query<{ id: number; name: string; unit: string }>(
    `SELECT t.id, t.name, t.unit FROM tags t JOIN sites s ON s.id = t.site_id
      WHERE t.retired_at IS NULL AND ($1::text IS NULL OR s.slug = $1)`,
    [siteSlug ?? null],
  );
  return tagLookupFrom(res.rows.map((r): TagInfo => ({ id: r.id, name: r.name, unit: r.unit })));
}
