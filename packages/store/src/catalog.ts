/** Reading the plant configuration back: machines and tags with their ids. */
import type {
  BandsSpec,
  BaselineSpec,
  FluidSpec,
  MachineKind,
  TagRole,
  TagUncertainty,
} from '@isentrope/plant';
import type { Queryable } from './errors.js';

export interface MachineRecord {
  readonly id: number;
  readonly siteId: number;
  readonly slug: string;
  readonly name: string;
  readonly kind: MachineKind;
  readonly fluid: FluidSpec;
  readonly driverEfficiency: number | null;
  readonly outOfService: boolean;
  readonly keyTags: readonly string[];
  readonly baseline: BaselineSpec | null;
  readonly bands: BandsSpec | null;
  readonly retired: boolean;
}

export interface TagRecord {
  readonly id: number;
  readonly siteId: number;
  readonly machineId: number | null;
  readonly name: string;
  readonly role: TagRole;
  readonly unit: string;
  readonly uncertainty: TagUncertainty | null;
  readonly validRange: { readonly min: number; readonly max: number } | null;
  readonly compression: { readonly method: 'deadband' | 'swinging-door'; readonly deviation: number } | null;
  readonly opcua: { readonly endpoint: string; readonly nodeId: string } | null;
  readonly retired: boolean;
}

interface MachineRow {
  id: number;
  site_id: number;
  slug: string;
  name: string;
  kind: MachineKind;
  fluid: FluidSpec;
  driver_efficiency: number | null;
  out_of_service: boolean;
  key_tags: string[];
  baseline_spec: BaselineSpec | null;
  bands: BandsSpec | null;
  retired: boolean;
}

/** Machines, active ones only unless asked. */
export async function getMachines(
  db: Queryable,
  options: { includeRetired?: boolean } = {},
): Promise<MachineRecord[]> {
  const r = await db.query<MachineRow>(
    `SELECT m.id, m.site_id, m.slug, m.name, m.kind, m.fluid, m.driver_efficiency, m.out_of_service, m.key_tags,
            m.baseline_spec, m.spec -> 'bands' AS bands, m.retired_at IS NOT NULL AS retired
       FROM machines m WHERE $1 OR m.retired_at IS NULL ORDER BY m.id`,
    [options.includeRetired ?? false],
  );
  return r.rows.map((m) => ({
    id: m.id,
    siteId: m.site_id,
    slug: m.slug,
    name: m.name,
    kind: m.kind,
    fluid: m.fluid,
    driverEfficiency: m.driver_efficiency,
    outOfService: m.out_of_service,
    keyTags: m.key_tags,
    baseline: m.baseline_spec,
    bands: m.bands,
    retired: m.retired,
  }));
}

interface TagRow {
  id: number;
  site_id: number;
  machine_id: number | null;
  name: string;
  role: TagRole;
  unit: string;
  uncertainty: TagUncertainty | null;
  valid_min: number | null;
  valid_max: number | null;
  compression_method: 'deadband' | 'swinging-door' | null;
  compression_deviation: number | null;
  opcua_endpoint: string | null;
  opcua_node_id: string | null;
  retired: boolean;
}

function toTag(t: TagRow): TagRecord {
  return {
    id: t.id,
    siteId: t.site_id,
    machineId: t.machine_id,
    name: t.name,
    role: t.role,
    unit: t.unit,
    uncertainty: t.uncertainty,
    validRange: t.valid_min !== null && t.valid_max !== null ? { min: t.valid_min, max: t.valid_max } : null,
    compression:
      t.compression_method !== null && t.compression_deviation !== null
        ? { method: t.compression_method, deviation: t.compression_deviation }
        : null,
    opcua:
      t.opcua_endpoint !== null && t.opcua_node_id !== null
        ? { endpoint: t.opcua_endpoint, nodeId: t.opcua_node_id }
        : null,
    retired: t.retired,
  };
}

const TAG_SELECT = `SELECT id, site_id, machine_id, name, role, unit, uncertainty, valid_min, valid_max, compression_method,
  compression_deviation, opcua_endpoint, opcua_node_id, retired_at IS NOT NULL AS retired FROM tags`;

export async function getTags(
  db: Queryable,
  options: { includeRetired?: boolean } = {},
): Promise<TagRecord[]> {
  const r = await db.query<TagRow>(`${TAG_SELECT} WHERE $1 OR retired_at IS NULL ORDER BY id`, [
    options.includeRetired ?? false,
  ]);
  return r.rows.map(toTag);
}

export async function getTagsForMachine(db: Queryable, machineId: number): Promise<TagRecord[]> {
  const r = await db.query<TagRow>(`${TAG_SELECT} WHERE machine_id = $1 AND retired_at IS NULL ORDER BY id`, [
    machineId,
  ]);
  return r.rows.map(toTag);
}
