/**
 * Plant configuration into the database: one transaction upserts the site, its machines,
 * tags, bands and sources from a validated plant file, retires what the file no longer
 * lists (history keeps its ids), and appends an audit entry with before and after.
 */
import type { PlantFile } from '@isentrope/plant';
import type pg from 'pg';
import { appendAudit } from './audit.js';
import { inTransaction } from './transaction.js';

export interface AppliedPlant {
  readonly siteId: number;
  /** machine slug -> id */
  readonly machines: Readonly<Record<string, number>>;
  /** tag name -> id */
  readonly tags: Readonly<Record<string, number>>;
  /** Machines and tags retired by this apply (no longer in the file). */
  readonly retiredMachines: readonly string[];
  readonly retiredTags: readonly string[];
}

type Client = pg.PoolClient;
type PlantMachine = PlantFile['machines'][number];
type PlantTag = PlantFile['tags'][number];

async function upsertSite(client: Client, site: PlantFile['site']): Promise<number> {
  const siteRow = await client.query<{ id: number }>(
    `INSERT INTO sites (slug, name, time_zone, ambient_pressure, barometer_tag, elevation_m, spec)
     VALUES ($1, $2, $3, $4, $5, $6, $7)
     ON CONFLICT (slug) DO UPDATE SET name = excluded.name, time_zone = excluded.time_zone,
       ambient_pressure = excluded.ambient_pressure, barometer_tag = excluded.barometer_tag,
       elevation_m = excluded.elevation_m, spec = excluded.spec, updated_at = now()
     RETURNING id`,
    [
      site.id,
      site.name,
      site.timeZone,
      site.ambientPressure?.text ?? null,
      site.barometerTag ?? null,
      site.elevation ?? null,
      site,
    ],
  );
  return siteRow.rows[0]!.id;
}

/** The machine's bands row as the file sets it; none when the file sets none (the jobs' defaults apply). */
async function writeBands(client: Client, id: number, m: PlantMachine): Promise<void> {
  if (m.bands === undefined) {
    await client.query('DELETE FROM bands WHERE machine_id = $1', [id]);
  } else {
    const b = m.bands;
    await client.query(
      `INSERT INTO bands (machine_id, warning, alarm, on_delay_s, off_delay_s, deadband, min_coverage, severity, require_beyond_uncertainty)
       VALUES ($1, $2, $3, $4, $5, $6, $7, $8, $9)
       ON CONFLICT (machine_id) DO UPDATE SET warning = excluded.warning, alarm = excluded.alarm,
         on_delay_s = excluded.on_delay_s, off_delay_s = excluded.off_delay_s, deadband = excluded.deadband,
         min_coverage = excluded.min_coverage, severity = excluded.severity,
         require_beyond_uncertainty = excluded.require_beyond_uncertainty, updated_at = now()`,
      [
        id,
        b.warning,
        b.alarm,
        b.onDelay,
        b.offDelay,
        b.deadband,
        b.minCoverage,
        b.severity,
        b.requireBeyondUncertainty,
      ],
    );
  }
}

async function upsertMachine(client: Client, siteId: number, m: PlantMachine): Promise<number> {
  const r = await client.query<{ id: number }>(
    `INSERT INTO machines (site_id, slug, name, kind, fluid, ratings, driver_efficiency, out_of_service, key_tags, baseline_spec, spec)
     VALUES ($1, $2, $3, $4, $5, $6, $7, $8, $9, $10, $11)
     ON CONFLICT (site_id, slug) DO UPDATE SET name = excluded.name, kind = excluded.kind, fluid = excluded.fluid,
       ratings = excluded.ratings, driver_efficiency = excluded.driver_efficiency, out_of_service = excluded.out_of_service,
       key_tags = excluded.key_tags, baseline_spec = excluded.baseline_spec, spec = excluded.spec,
       retired_at = NULL, updated_at = now()
     RETURNING id`,
    [
      siteId,
      m.id,
      m.name,
      m.kind,
      JSON.stringify(m.fluid),
      m.ratings,
      m.driverEfficiency ?? null,
      m.outOfService,
      m.keyTags,
      m.baseline ?? null,
      m,
    ],
  );
  const id = r.rows[0]!.id;
  await writeBands(client, id, m);
  return id;
}

async function upsertTag(
  client: Client,
  siteId: number,
  machines: Readonly<Record<string, number>>,
  t: PlantTag,
): Promise<number> {
  const r = await client.query<{ id: number }>(
    `INSERT INTO tags (site_id, machine_id, name, description, role, unit, uncertainty, valid_min, valid_max,
                       compression_method, compression_deviation, opcua_endpoint, opcua_node_id, spec)
     VALUES ($1, $2, $3, $4, $5, $6, $7, $8, $9, $10, $11, $12, $13, $14)
     ON CONFLICT (site_id, name) DO UPDATE SET machine_id = excluded.machine_id, description = excluded.description,
       role = excluded.role, unit = excluded.unit, uncertainty = excluded.uncertainty, valid_min = excluded.valid_min,
       valid_max = excluded.valid_max, compression_method = excluded.compression_method,
       compression_deviation = excluded.compression_deviation, opcua_endpoint = excluded.opcua_endpoint,
       opcua_node_id = excluded.opcua_node_id, spec = excluded.spec, retired_at = NULL, updated_at = now()
     RETURNING id`,
    [
      siteId,
      t.machine === undefined ? null : (machines[t.machine] ?? null),
      t.name,
      t.description ?? null,
      t.role,
      t.unit,
      t.uncertainty ?? null,
      t.validRange?.min ?? null,
      t.validRange?.max ?? null,
      t.compression?.method ?? null,
      t.compression?.deviation ?? null,
      t.opcua?.endpoint ?? null,
      t.opcua?.nodeId ?? null,
      t,
    ],
  );
  return r.rows[0]!.id;
}

/** Retire the rows of `table` on the site whose `key` the file no longer lists; returns their keys. */
async function retireUnlisted(
  client: Client,
  table: 'machines' | 'tags',
  key: 'slug' | 'name',
  siteId: number,
  listed: readonly string[],
): Promise<string[]> {
  const r = await client.query<Record<string, string>>(
    `UPDATE ${table} SET retired_at = now(), updated_at = now()
      WHERE site_id = $1 AND retired_at IS NULL AND NOT (${key} = ANY($2::text[])) RETURNING ${key}`,
    [siteId, [...listed]],
  );
  return r.rows.map((row) => row[key] as string);
}

async function writeSources(client: Client, siteId: number, plant: PlantFile): Promise<void> {
  for (const s of plant.sources) {
    await client.query(
      `INSERT INTO sources (site_id, slug, kind, spec) VALUES ($1, $2, $3, $4)
       ON CONFLICT (site_id, slug) DO UPDATE SET kind = excluded.kind, spec = excluded.spec, retired_at = NULL, updated_at = now()`,
      [siteId, s.id, s.kind, s],
    );
  }
  await client.query(
    `UPDATE sources SET retired_at = now() WHERE site_id = $1 AND retired_at IS NULL AND NOT (slug = ANY($2::text[]))`,
    [siteId, plant.sources.map((s) => s.id)],
  );
}

export async function applyPlant(pool: pg.Pool, plant: PlantFile, actor: string): Promise<AppliedPlant> {
  return inTransaction(pool, async (client) => {
    // Two loads of one site at once would interleave upserts; serialize them.
    await client.query('SELECT pg_advisory_xact_lock(hashtext($1))', [`isentrope.plant.${plant.site.id}`]);
    const before = await snapshot(client, plant.site.id);
    const siteId = await upsertSite(client, plant.site);
    const machines: Record<string, number> = {};
    for (const m of plant.machines) machines[m.id] = await upsertMachine(client, siteId, m);
    const retiredMachines = await retireUnlisted(client, 'machines', 'slug', siteId, Object.keys(machines));
    const tags: Record<string, number> = {};
    for (const t of plant.tags) tags[t.name] = await upsertTag(client, siteId, machines, t);
    const retiredTags = await retireUnlisted(client, 'tags', 'name', siteId, Object.keys(tags));
    await writeSources(client, siteId, plant);
    await appendAudit(client, {
      actor,
      action: 'plant.apply',
      entity: 'site',
      entityId: plant.site.id,
      before,
      after: plant,
    });
    return { siteId, machines, tags, retiredMachines, retiredTags };
  });
}

/** The site's current configuration as stored (null for a new site), for the audit entry. */
async function snapshot(client: pg.PoolClient, slug: string): Promise<unknown> {
  const r = await client.query<{ snapshot: unknown }>(
    `SELECT jsonb_build_object(
        'site', s.spec,
        'machines', (SELECT coalesce(jsonb_agg(m.spec ORDER BY m.slug), '[]') FROM machines m WHERE m.site_id = s.id AND m.retired_at IS NULL),
        'tags', (SELECT coalesce(jsonb_agg(t.spec ORDER BY t.name), '[]') FROM tags t WHERE t.site_id = s.id AND t.retired_at IS NULL),
        'sources', (SELECT coalesce(jsonb_agg(x.spec ORDER BY x.slug), '[]') FROM sources x WHERE x.site_id = s.id AND x.retired_at IS NULL)
      ) AS snapshot
       FROM sites s WHERE s.slug = $1`,
    [slug],
  );
  return r.rows[0]?.snapshot ?? null;
}
