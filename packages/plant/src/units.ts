/**
 * The unit names a plant file may use, and the dimension each measures.
 *
 * Interim list: the thermo unit parser (`unitDimension` / `acceptedUnits` in
 * packages/thermo/src/units) is being written; when it lands these two functions delegate
 * to it, and this table goes. Until then the spellings follow DESIGN.md section 5.
 * A pressure without a gauge mark is absolute (the SI convention); gauge units need the
 * site's ambient pressure.
 */

export type UnitDimension =
  | 'pressure'
  | 'gaugePressure'
  | 'temperature'
  | 'massFlow'
  | 'volumeFlow'
  | 'normalVolumeFlow'
  | 'power'
  | 'speed'
  | 'fraction'
  | 'length';

const UNITS: Readonly<Record<UnitDimension, readonly string[]>> = {
  pressure: [
    'Pa',
    'kPa',
    'kPa(a)',
    'kPaa',
    'MPa',
    'MPa(a)',
    'MPaa',
    'bar',
    'bara',
    'bar(a)',
    'mbar',
    'mbara',
    'psia',
  ],
  gaugePressure: ['barg', 'bar(g)', 'kPag', 'kPa(g)', 'MPag', 'MPa(g)', 'mbarg', 'psig', 'mmH2O', 'inH2O'],
  temperature: ['K', 'degC', 'degF'],
  massFlow: ['kg/s', 'kg/h', 't/h', 'lb/h', 'lb/s', 'klb/h'],
  volumeFlow: ['m3/s', 'm3/h', 'Am3/h', 'l/s', 'l/min'],
  normalVolumeFlow: ['Nm3/h', 'Nm3/s', 'Sm3/h'],
  power: ['W', 'kW', 'MW', 'hp'],
  speed: ['rpm', '1/min', 'Hz', 'rad/s'],
  fraction: ['%', '1'],
  length: ['m', 'mm', 'ft'],
};

const BY_NAME: ReadonlyMap<string, UnitDimension> = new Map(
  (Object.entries(UNITS) as [UnitDimension, readonly string[]][]).flatMap(([dimension, names]) =>
    names.map((name) => [name, dimension] as const),
  ),
);

/** The dimension a unit measures, or undefined when the unit is unknown. */
export function unitDimension(unit: string): UnitDimension | undefined {
  return BY_NAME.get(unit);
}

/** Every accepted unit spelling, optionally only those of the given dimensions. */
export function acceptedUnits(dimensions?: readonly UnitDimension[]): readonly string[] {
  const wanted = dimensions ?? (Object.keys(UNITS) as UnitDimension[]);
  return wanted.flatMap((d) => UNITS[d]);
}

/** A parsed quantity string such as "1.013 bara" or "12 MW". */
export interface Quantity {
  readonly value: number;
  readonly unit: string;
}

const QUANTITY = /^\s*([-+]?(?:\d+(?:\.\d*)?|\.\d+)(?:[eE][-+]?\d+)?)\s*(\S+)\s*$/;

/** Splits "1.013 bara" into value and unit; undefined when the text is not a number and a word. */
export function parseQuantity(text: string): Quantity | undefined {
  const m = QUANTITY.exec(text);
  if (m === null || m[1] === undefined || m[2] === undefined) return undefined;
  const value = Number(m[1]);
  return Number.isFinite(value) ? { value, unit: m[2] } : undefined;
}
