/**
 * A machine as the computation needs it: its tags with the linear map from the stored unit to SI
 * (taken from the thermo unit table, so there is one source of unit facts), instrument
 * uncertainties, valid ranges, and a hash of everything that changes a result, so that a change
 * of a tag's unit or of the machine triggers a recompute.
 */
import { createHash } from 'node:crypto';
import * as thermo from '@isentrope/thermo';
import { type Fluid, parseQuantity, toSI, unitDimension } from '@isentrope/thermo';
import { ComputeError } from './errors.js';

/** Tag roles that feed the machine model. */
export const MODEL_ROLES = [
  'inletPressure',
  'inletTemperature',
  'outletPressure',
  'outletTemperature',
  'massFlow',
  'volumeFlow',
  'shaftPower',
  'electricalPower',
] as const;
export type ModelRole = (typeof MODEL_ROLES)[number];

export type OperatingPointKind = 'load' | 'massFlow' | 'pressureRatio';

/** A tag row as stored (unit as received). */
export interface TagRow {
  readonly id: number;
  readonly name: string;
  readonly role: string;
  readonly unit: string;
  /** {absolute} | {percentOfReading} | {percentOfSpan, span}, in the tag unit. */
  readonly uncertainty: unknown;
  readonly validMin: number | null;
  readonly validMax: number | null;
}

export interface MachineRow {
  readonly id: number;
  readonly slug: string;
  readonly name: string;
  readonly kind: 'turbine' | 'compressor' | 'pump' | 'fan';
  readonly fluid: unknown;
  readonly ratings: unknown;
  readonly driverEfficiency: number | null;
  readonly outOfService: boolean;
  readonly keyTags: readonly string[];
  readonly baselineSpec: unknown;
  readonly siteAmbientPressure: string | null;
  readonly siteTimeZone: string;
  readonly tags: readonly TagRow[];
  /** The site's barometer tag (role ambientPressure), when the site names one. */
  readonly barometer: TagRow | undefined;
}

/** A tag ready for computing: SI = intercept + slope x raw (+ ambient for a gauge pressure). */
export interface PreparedTag {
  readonly id: number;
  readonly name: string;
  readonly role: string;
  readonly unit: string;
  readonly slope: number;
  readonly intercept: number;
  readonly gauge: boolean;
  /** Normal or standard volume flow (needs the gas molar mass to become mass flow). */
  readonly normalVolume: 'normal' | 'standard' | undefined;
  /** Standard uncertainty per point [SI], from the raw reading [tag unit]. */
  readonly uncertaintySI: (rawReading: number) => number;
  /** Valid range [tag unit]. */
  readonly validMin: number | undefined;
  readonly validMax: number | undefined;
}

export interface PreparedMachine {
  readonly row: MachineRow;
  readonly fluid: Fluid;
  readonly tags: ReadonlyMap<string, PreparedTag>;
  /** Roles whose steadiness decides the machine's steady state. */
  readonly keyRoles: readonly string[];
  /** Fixed ambient pressure [Pa], when the site gives one. */
  readonly ambientPressure: number | undefined;
  readonly barometer: PreparedTag | undefined;
  readonly operatingPoint: OperatingPointKind;
  /** Rated inlet and outlet pressures [Pa], absolute, when given (gauge/absolute mix-up check). */
  readonly ratedInletPressure: number | undefined;
  readonly ratedOutletPressure: number | undefined;
  /** Rated mass flow [kg/s] when the ratings give one in mass units (the running test). */
  readonly ratedMassFlow: number | undefined;
  readonly configHash: string;
}

/** Conventional standard atmosphere [Pa] (NIST SP 811, exact), used only to read gauge-unit slopes. */
const ATM = 101_325;

/** Resolves a plant fluid spec to a property model. */
export type FluidResolver = (spec: unknown) => Fluid;

type FluidFactory = (...args: never[]) => Fluid;
function exported(name: string): FluidFactory | undefined {
  // Looked up at run time: the water and gas models land in @isentrope/thermo while this
  // service is being written; a missing one is a typed error, never a substitute fluid.
  const value: unknown = (thermo as Readonly<Record<string, unknown>>)[name];
  return typeof value === 'function' ? (value as FluidFactory) : undefined;
}

function isRecord(v: unknown): v is Readonly<Record<string, unknown>> {
  return typeof v === 'object' && v !== null && !Array.isArray(v);
}

/** The default resolver: water (IAPWS-IF97), dry air, gas mixtures, incompressible liquids. */
export const defaultFluidResolver: FluidResolver = (spec) => {
  const unavailable = (name: string): never => {
    throw new ComputeError(
      'COMPUTE_FLUID_UNAVAILABLE',
      `fluid model ${name} is not exported by @isentrope/thermo`,
      {
        fluid: spec,
      },
    );
  };
  if (spec === 'water') {
    const water: unknown = (thermo as Readonly<Record<string, unknown>>).water;
    if (isRecord(water) && typeof water.statePT === 'function') return water as unknown as Fluid;
    const make = exported('water');
    return make !== undefined ? (make as () => Fluid)() : unavailable('water');
  }
  if (spec === 'air') {
    const make = exported('dryAir');
    return make !== undefined ? (make as () => Fluid)() : unavailable('dryAir');
  }
  if (isRecord(spec)) {
    const liquid = spec.liquid;
    if (isRecord(liquid) && typeof liquid.density === 'number' && typeof liquid.cp === 'number')
      return thermo.incompressibleLiquid(liquid.density, liquid.cp);
    if (isRecord(spec.composition) && (spec.model === 'ideal' || spec.model === 'peng-robinson')) {
      const make = exported('naturalGas');
      if (make === undefined) return unavailable('naturalGas');
      return (make as (c: Readonly<Record<string, number>>, m: string) => Fluid)(
        spec.composition as Readonly<Record<string, number>>,
        spec.model,
      );
    }
  }
  throw new ComputeError('COMPUTE_BAD_CONFIG', `unknown fluid spec ${JSON.stringify(spec)}`, { fluid: spec });
};

function linearMap(tag: TagRow): { slope: number; intercept: number; gauge: boolean } {
  let gauge: boolean;
  try {
    gauge = thermo.isGaugeUnit(tag.unit);
  } catch (cause) {
    throw new ComputeError(
      'COMPUTE_BAD_CONFIG',
      `tag ${tag.name}: unit "${tag.unit}" is not known`,
      { tag: tag.name, unit: tag.unit },
      { cause },
    );
  }
  const opts = gauge ? { ambientPressure: ATM } : undefined;
  // Every accepted unit is SI = (value + offset) x factor (thermo units table): two points fix it.
  const at0 = toSI(0, tag.unit, opts);
  const at1 = toSI(1, tag.unit, opts);
  return { slope: at1 - at0, intercept: gauge ? at0 - ATM : at0, gauge };
}

function uncertaintyFn(tag: TagRow, slope: number): (raw: number) => number {
  const u = tag.uncertainty;
  if (!isRecord(u)) return () => 0;
  const s = Math.abs(slope);
  if (typeof u.absolute === 'number') {
    const v = u.absolute * s;
    return () => v;
  }
  if (typeof u.percentOfReading === 'number') {
    const p = u.percentOfReading / 100;
    return (raw) => Math.abs(raw) * p * s;
  }
  if (typeof u.percentOfSpan === 'number' && typeof u.span === 'number') {
    const v = (u.percentOfSpan / 100) * u.span * s;
    return () => v;
  }
  throw new ComputeError(
    'COMPUTE_BAD_CONFIG',
    `tag ${tag.name}: uncertainty ${JSON.stringify(u)} not understood`,
    {
      tag: tag.name,
    },
  );
}

export function prepareTag(tag: TagRow): PreparedTag {
  const { slope, intercept, gauge } = linearMap(tag);
  const ref = thermo.volumeReference(tag.unit);
  return {
    id: tag.id,
    name: tag.name,
    role: tag.role,
    unit: tag.unit,
    slope,
    intercept,
    gauge,
    normalVolume: unitDimension(tag.unit) === 'normalVolumeFlow' ? ref : undefined,
    uncertaintySI: uncertaintyFn(tag, slope),
    validMin: tag.validMin ?? undefined,
    validMax: tag.validMax ?? undefined,
  };
}

/** A rating written as "40 bara" or stored as {value, unit}: [SI]; undefined when absent. */
function ratingSI(ratings: unknown, key: string, ambient: number | undefined): number | undefined {
  if (!isRecord(ratings)) return undefined;
  const r = ratings[key];
  const opts = { ambientPressure: ambient ?? ATM };
  if (typeof r === 'string') return parseQuantity(r, opts).valueSI;
  if (isRecord(r) && typeof r.value === 'number' && typeof r.unit === 'string')
    return toSI(r.value, r.unit, opts);
  return undefined;
}

function ratedMassFlow(ratings: unknown): number | undefined {
  if (!isRecord(ratings)) return undefined;
  const r = ratings.ratedFlow;
  const unit =
    typeof r === 'string'
      ? parseQuantity(r).unit
      : isRecord(r) && typeof r.unit === 'string'
        ? r.unit
        : undefined;
  if (unit === undefined || unitDimension(unit) !== 'massFlow') return undefined;
  return ratingSI(ratings, 'ratedFlow', undefined);
}

export function prepareMachine(
  row: MachineRow,
  fluids: FluidResolver = defaultFluidResolver,
): PreparedMachine {
  const tags = new Map<string, PreparedTag>();
  for (const t of row.tags) {
    if (!(MODEL_ROLES as readonly string[]).includes(t.role)) continue;
    if (tags.has(t.role))
      throw new ComputeError('COMPUTE_BAD_CONFIG', `machine ${row.slug}: two tags with role ${t.role}`, {
        machine: row.slug,
        role: t.role,
      });
    tags.set(t.role, prepareTag(t));
  }
  for (const need of ['inletPressure', 'inletTemperature', 'outletPressure', 'outletTemperature'] as const)
    if (!tags.has(need))
      throw new ComputeError('COMPUTE_BAD_CONFIG', `machine ${row.slug} has no tag with role ${need}`, {
        machine: row.slug,
        role: need,
      });
  let ambientPressure: number | undefined;
  if (row.siteAmbientPressure !== null) ambientPressure = parseQuantity(row.siteAmbientPressure).valueSI;
  const barometer = row.barometer !== undefined ? prepareTag(row.barometer) : undefined;
  const needsAmbient = [...tags.values()].some((t) => t.gauge);
  if (needsAmbient && ambientPressure === undefined && barometer === undefined)
    throw new ComputeError(
      'COMPUTE_BAD_CONFIG',
      `machine ${row.slug} has gauge pressure tags but the site has no ambient pressure or barometer`,
      {
        machine: row.slug,
      },
    );
  const byName = new Map(row.tags.map((t) => [t.name, t.role]));
  let keyRoles = row.keyTags
    .map((n) => byName.get(n))
    .filter((r): r is string => r !== undefined && tags.has(r));
  if (keyRoles.length === 0)
    keyRoles = ['massFlow', 'volumeFlow', 'inletPressure'].filter((r) => tags.has(r)).slice(0, 2);
  const spec = isRecord(row.baselineSpec) ? row.baselineSpec : undefined;
  const op = spec?.operatingPoint;
  const operatingPoint: OperatingPointKind =
    op === 'load' || op === 'massFlow' || op === 'pressureRatio' ? op : 'massFlow';
  const hash = createHash('sha256')
    .update(
      JSON.stringify({
        kind: row.kind,
        fluid: row.fluid,
        ratings: row.ratings,
        driver: row.driverEfficiency,
        key: row.keyTags,
        op: operatingPoint,
        amb: row.siteAmbientPressure,
        baro: row.barometer === undefined ? null : [row.barometer.id, row.barometer.unit],
        tags: [...row.tags]
          .sort((a, b) => a.id - b.id)
          .map((t) => [t.id, t.role, t.unit, t.uncertainty, t.validMin, t.validMax]),
      }),
    )
    .digest('hex')
    .slice(0, 16);
  return {
    row,
    fluid: fluids(row.fluid),
    tags,
    keyRoles,
    ambientPressure,
    barometer,
    operatingPoint,
    ratedInletPressure: ratingSI(row.ratings, 'ratedInletPressure', ambientPressure),
    ratedOutletPressure: ratingSI(row.ratings, 'ratedOutletPressure', ambientPressure),
    ratedMassFlow: ratedMassFlow(row.ratings),
    configHash: hash,
  };
}
