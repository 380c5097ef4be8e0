/**
 * The unit names a plant file may use, and the dimension each measures, from the thermo
 * unit parser (`unitDimension`, `acceptedUnits`, `parseQuantity` in @isentrope/thermo), so
 * a unit that validates here is one the computation can convert.
 *
 * The plant model splits thermo's 'pressure' into absolute 'pressure' and 'gaugePressure'
 * (a gauge unit needs the site's ambient pressure, and an ambient-pressure tag must be
 * absolute). Two dimensions thermo does not convert are listed here because tags carry
 * them without entering a property calculation: shaft speed and length.
 */
import {
  type Dimension,
  isGaugeUnit,
  ThermoError,
  acceptedUnits as thermoAcceptedUnits,
  parseQuantity as thermoParseQuantity,
  unitDimension as thermoUnitDimension,
} from '@isentrope/thermo';

export type UnitDimension =
  | Exclude<Dimension, 'pressure'>
  | 'pressure'
  | 'gaugePressure'
  | 'speed'
  | 'length';

/** Units of the dimensions thermo does not know (no conversion needed by any calculation). */
const LOCAL_UNITS: Readonly<Record<'speed' | 'length', readonly string[]>> = {
  speed: ['rpm', '1/min', 'Hz', 'rad/s'],
  length: ['m', 'mm', 'ft'],
};

const LOCAL_BY_NAME: ReadonlyMap<string, 'speed' | 'length'> = new Map(
  (['speed', 'length'] as const).flatMap((d) => LOCAL_UNITS[d].map((name) => [name, d] as const)),
);

/** thermo's dimension of a unit, undefined when thermo does not accept it. */
function thermoDimension(unit: string): Dimension | undefined {
  try {
    return thermoUnitDimension(unit);
  } catch (error) {
    // Only "unknown unit" means undefined; any other failure is a bug to surface.
    if (error instanceof ThermoError) return undefined;
    throw error;
  }
}

/** The dimension a unit measures, or undefined when the unit is unknown. */
export function unitDimension(unit: string): UnitDimension | undefined {
  const local = LOCAL_BY_NAME.get(unit);
  if (local !== undefined) return local;
  const d = thermoDimension(unit);
  if (d === 'pressure' && isGaugeUnit(unit)) return 'gaugePressure';
  return d;
}

const THERMO_DIMENSIONS: readonly Dimension[] = [
  'pressure',
  'pressureDifference',
  'temperature',
  'massFlow',
  'volumeFlow',
  'normalVolumeFlow',
  'power',
  'specificEnergy',
  'specificEntropy',
  'density',
  'fraction',
];

/** Every accepted unit spelling (canonical names), optionally only those of the given dimensions. */
export function acceptedUnits(dimensions?: readonly UnitDimension[]): readonly string[] {
  const wanted: readonly UnitDimension[] = dimensions ?? [
    ...THERMO_DIMENSIONS,
    'gaugePressure',
    'speed',
    'length',
  ];
  const out: string[] = [];
  for (const d of wanted) {
    if (d === 'speed' || d === 'length') out.push(...LOCAL_UNITS[d]);
    else if (d === 'pressure') out.push(...thermoAcceptedUnits('pressure').filter((u) => !isGaugeUnit(u)));
    else if (d === 'gaugePressure')
      out.push(...thermoAcceptedUnits('pressure').filter((u) => isGaugeUnit(u)));
    else out.push(...thermoAcceptedUnits(d));
  }
  return [...new Set(out)];
}

/** A parsed quantity string such as "1.013 bara" or "12 MW". */
export interface Quantity {
  readonly value: number;
  /** The unit as written. */
  readonly unit: string;
}

const QUANTITY = /^\s*([-+]?(?:\d+(?:\.\d*)?|\.\d+)(?:[eE][-+]?\d+)?)\s*(\S.*?)\s*$/;

/**
 * Splits "1.013 bara" into value and unit; undefined when the text is not a number and a
 * unit. Units thermo knows are read by thermo's parseQuantity (its number syntax and unit
 * spellings); the unit is kept as written so messages quote the file.
 */
export function parseQuantity(text: string): Quantity | undefined {
  const m = QUANTITY.exec(text);
  if (m === null || m[1] === undefined || m[2] === undefined) return undefined;
  const unit = m[2];
  if (LOCAL_BY_NAME.has(unit)) {
    const value = Number(m[1]);
    return Number.isFinite(value) ? { value, unit } : undefined;
  }
  if (thermoDimension(unit) === undefined) {
    // An unknown unit still parses, so the schema can say "unknown unit" with the list.
    const value = Number(m[1]);
    return Number.isFinite(value) ? { value, unit } : undefined;
  }
  try {
    // Gauge readings need an ambient pressure to reach SI; only the number is wanted here.
    const q = thermoParseQuantity(text, { ambientPressure: 101_325 });
    return { value: q.value, unit };
  } catch (error) {
    if (error instanceof ThermoError) return undefined;
    throw error;
  }
}
