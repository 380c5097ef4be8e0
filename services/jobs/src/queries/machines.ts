/**
 * Reads the plant configuration the jobs need. Written here because packages/store has no
 * reader for it yet; move to the store when it has one.
 */
import type { MachineRow, TagRow } from '@isentrope/compute';
import type { Queryable } from '@isentrope/store';

/** The store's one declaration, re-exported for the modules that import it from here. */
export type { Queryable };

interface MachineDb {
  id: number;
  slug: string;
  name: string;
  kind: MachineRow['kind'];
  fluid: unknown;
  ratings: unknown;
  driver_efficiency: number | null;
  out_of_service: boolean;
  key_tags: string[];
  baseline_spec: unknown;
  ambient_pressure: string | null;
  barometer_tag: string | null;
  site_id: number;
  time_zone: string;
}

interface TagDb {
  id: number;
  site_id: number;
  machine_id: number | null;
  name: string;
  role: string;
  unit: string;
  uncertainty: unknown;
  valid_min: number | null;
  valid_max: number | null;
}

function tagRow(t: TagDb): TagRow {
  return {
    id: t.id,
    name: t.name,
    role: t.role,
    unit: t.unit,
    uncertainty: t.uncertainty,
    validMin: t.valid_min,
    validMax: t.valid_max,
  };
}

/** Machines not retired (optionally only the given ids), with their tags and site settings. */
export async function loadMachines(db: Queryable, machineIds?: readonly number[]): Promise<MachineRow[]> {
  const machines = await db.query<MachineDb>(
    `SELECT m.id, m.slug, m.name, m.kind, m.fluid, m.ratings, m.driver_efficiency, m.out_of_service,
            m.key_tags, m.baseline_spec, s.ambient_pressure, s.barometer_tag, s.id AS site_id, s.time_zone
       FROM machines m JOIN sites s ON s.id = m.site_id
      WHERE m.retired_at IS NULL AND ($1::int[] IS NULL OR m.id = ANY($1::int[]))
      ORDER BY m.id`,
    [machineIds === undefined ? null : [...machineIds]],
  );
  if (machines.rows.length === 0) return [];
  const tags = await db.query<TagDb>(
    `SELECT id, site_id, machine_id, name, role, unit, uncertainty, valid_min, valid_max
       FROM tags
      WHERE retired_at IS NULL AND (machine_id = ANY($1::int[]) OR (machine_id IS NULL AND site_id = ANY($2::int[])))`,
    [machines.rows.map((m) => m.id), [...new Set(machines.rows.map((m) => m.site_id))]],
  );
  return machines.rows.map((m) => {
    const baro =
      m.barometer_tag === null
        ? undefined
        : tags.rows.find((t) => t.site_id === m.site_id && t.name === m.barometer_tag);
    return {
      id: m.id,
      slug: m.slug,
      name: m.name,
      kind: m.kind,
      fluid: m.fluid,
      ratings: m.ratings,
      driverEfficiency: m.driver_efficiency,
      outOfService: m.out_of_service,
      keyTags: m.key_tags,
      baselineSpec: m.baseline_spec,
      siteAmbientPressure: m.ambient_pressure,
      siteTimeZone: m.time_zone,
      tags: tags.rows.filter((t) => t.machine_id === m.id).map(tagRow),
      barometer: baro === undefined ? undefined : tagRow(baro),
    };
  });
}
