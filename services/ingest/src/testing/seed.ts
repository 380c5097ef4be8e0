/** Test helpers: a site with a few tags inserted directly (invented demo tags, not a real plant). */
import type pg from 'pg';

export interface SeedTag {
  readonly name: string;
  readonly unit: string;
  readonly role?: string;
  readonly opcua?: { endpoint: string; nodeId: string };
}

export const DEMO_TAGS: readonly SeedTag[] = [
  { name: 'ST1.PI-100', unit: 'bara', role: 'inletPressure' },
  { name: 'ST1.TI-100', unit: 'degC', role: 'inletTemperature' },
  { name: 'ST1.FI-100', unit: 't/h', role: 'massFlow' },
];

/** Inserts a site and its tags; returns tag name -> id. */
export async function seedTags(
  pool: pg.Pool,
  tags: readonly SeedTag[] = DEMO_TAGS,
  site = 'demo',
): Promise<Map<string, number>> {
  const s = await pool.query<{ id: number }>(
    `INSERT INTO sites (slug, name, time_zone, spec) VALUES ($1, $1, 'Europe/Berlin', '{}')
     ON CONFLICT (slug) DO UPDATE SET name = EXCLUDED.name RETURNING id`,
    [site],
  );
  const siteId = s.rows[0]!.id;
  const ids = new Map<string, number>();
  for (const t of tags) {
    const r = await pool.query<{ id: number }>(
      `INSERT INTO tags (site_id, name, role, unit, opcua_endpoint, opcua_node_id, spec) VALUES ($1, $2, $3, $4, $5, $6, '{}')
       ON CONFLICT (site_id, name) DO UPDATE SET unit = EXCLUDED.unit RETURNING id`,
      [siteId, t.name, t.role ?? 'other', t.unit, t.opcua?.endpoint ?? null, t.opcua?.nodeId ?? null],
    );
    ids.set(t.name, r.rows[0]!.id);
  }
  return ids;
}
