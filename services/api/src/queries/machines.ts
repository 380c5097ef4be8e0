import type pg from 'pg';
import { ApiError } from '../errors.js';

export interface SiteRow {
  id: number;
  slug: string;
  name: string;
  time_zone: string;
  ambient_pressure: string | null;
  elevation_m: number | null;
}

export async function listSites(pool: pg.Pool): Promise<SiteRow[]> {
  const { rows } = await pool.query<SiteRow>(
    `SELECT id, slug, name, time_zone, ambient_pressure, elevation_m FROM sites ORDER BY slug`,
  );
  return rows;
}

export interface MachineRow {
  id: number;
  site_id: number;
  site_slug: string;
  slug: string;
  name: string;
  kind: 'turbine' | 'compressor' | 'pump' | 'fan';
  fluid: unknown;
  ratings: Record<string, unknown>;
  driver_efficiency: number | null;
  out_of_service: boolean;
  key_tags: string[];
  retired_at: Date | null;
}

const MACHINE_COLUMNS = `m.id, m.site_id, s.slug AS site_slug, m.slug, m.name, m.kind, m.fluid, m.ratings,
  m.driver_efficiency, m.out_of_service, m.key_tags, m.retired_at`;

export async function listMachines(pool: pg.Pool): Promise<MachineRow[]> {
  const { rows } = await pool.query<MachineRow>(
    `SELECT ${MACHINE_COLUMNS} FROM machines m JOIN sites s ON s.id = m.site_id ORDER BY s.slug, m.slug`,
  );
  return rows;
}

export async function getMachine(pool: pg.Pool, id: number): Promise<MachineRow | undefined> {
  const { rows } = await pool.query<MachineRow>(
    `SELECT ${MACHINE_COLUMNS} FROM machines m JOIN sites s ON s.id = m.site_id WHERE m.id = $1`,
    [id],
  );
  return rows[0];
}

/** The machine, or the API's 404 problem when there is none with that id. */
export async function machineOr404(pool: pg.Pool, id: number): Promise<MachineRow> {
  const m = await getMachine(pool, id);
  if (m === undefined) throw new ApiError('API_NOT_FOUND', { entity: 'machine', id });
  return m;
}

export interface TagRow {
  id: number;
  site_id: number;
  machine_id: number | null;
  name: string;
  description: string | null;
  role: string;
  unit: string;
  valid_min: number | null;
  valid_max: number | null;
  retired_at: Date | null;
  last_time: Date | null;
  last_value: number | null;
}

export async function listTags(pool: pg.Pool, machineId: number | undefined): Promise<TagRow[]> {
  const { rows } = await pool.query<TagRow>(
    `SELECT t.id, t.site_id, t.machine_id, t.name, t.description, t.role, t.unit, t.valid_min, t.valid_max,
            t.retired_at, l.time AS last_time, l.value AS last_value
       FROM tags t LEFT JOIN tag_last l ON l.tag_id = t.id
      WHERE $1::int IS NULL OR t.machine_id = $1
      ORDER BY t.name`,
    [machineId ?? null],
  );
  return rows;
}

export async function getTag(pool: pg.Pool, id: number): Promise<TagRow | undefined> {
  const { rows } = await pool.query<TagRow>(
    `SELECT t.id, t.site_id, t.machine_id, t.name, t.description, t.role, t.unit, t.valid_min, t.valid_max,
            t.retired_at, l.time AS last_time, l.value AS last_value
       FROM tags t LEFT JOIN tag_last l ON l.tag_id = t.id WHERE t.id = $1`,
    [id],
  );
  return rows[0];
}

export interface BandRow {
  machine_id: number;
  warning: number;
  alarm: number;
  on_delay_s: number;
  off_delay_s: number;
  deadband: number;
  min_coverage: number;
  severity: 'low' | 'medium' | 'high' | 'urgent';
  require_beyond_uncertainty: boolean;
}

export async function getBands(db: Pick<pg.Pool, 'query'>, machineId: number): Promise<BandRow | undefined> {
  const { rows } = await db.query<BandRow>(
    `SELECT machine_id, warning, alarm, on_delay_s, off_delay_s, deadband, min_coverage, severity,
            require_beyond_uncertainty FROM bands WHERE machine_id = $1`,
    [machineId],
  );
  return rows[0];
}
