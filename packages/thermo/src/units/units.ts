import { AmbientPressureRequiredError, BadQuantityError, UnitUnknownError } from './errors.js';

/**
 * Units as plants write them, turned into SI at the edge (DESIGN.md section 5). Raw samples keep
 * their own unit; the computation calls toSI once per value.
 *
 * Conversion factors are exact by definition unless noted: the pound (0.45359237 kg), the inch
 * (0.0254 m), standard gravity (9.80665 m/s2) and the standard atmosphere (101325 Pa), as listed
 * in NIST Special Publication 811 (2008), Appendix B.
 */

/** What a unit measures. The SI unit of each is given in SI_UNIT. */
export type Dimension =
  | 'pressure'
  | 'pressureDifference'
  | 'temperature'
  | 'massFlow'
  | 'volumeFlow'
  | 'normalVolumeFlow'
  | 'power'
  | 'specificEnergy'
  | 'specificEntropy'
  | 'density'
  | 'fraction';

/** The SI unit each dimension is converted to. */
export const SI_UNIT: Readonly<Record<Dimension, string>> = {
  pressure: 'Pa', // absolute
  pressureDifference: 'Pa',
  temperature: 'K',
  massFlow: 'kg/s',
  volumeFlow: 'm3/s', // actual, at flowing conditions
  normalVolumeFlow: 'm3/s', // at the unit's own reference state (see VolumeReference)
  power: 'W',
  specificEnergy: 'J/kg',
  specificEntropy: 'J/(kg K)',
  density: 'kg/m3',
  fraction: '1',
};

/**
 * Reference state of a normal or standard volume: 'normal' is 0 degC and 101.325 kPa (DIN 1343),
 * 'standard' is 15 degC and 101.325 kPa (ISO 13443). Nm3 and Sm3 are not interchangeable.
 */
export type VolumeReference = 'normal' | 'standard';

/** Temperature [K] and pressure [Pa] of each volume reference state. */
export const VOLUME_REFERENCE_STATE: Readonly<
  Record<VolumeReference, { readonly T: number; readonly p: number }>
> = {
  normal: { T: 273.15, p: 101_325 },
  standard: { T: 288.15, p: 101_325 },
};

/** Molar gas constant [J/(mol K)], exact since the 2019 SI redefinition (CODATA 2018). */
export const MOLAR_GAS_CONSTANT = 8.314_462_618;

interface UnitDef {
  /** Canonical spelling, as listed by acceptedUnits. */
  readonly name: string;
  /** Other spellings; matched after normalisation (case, spaces, superscripts, degree sign). */
  readonly aliases: readonly string[];
  readonly dimension: Dimension;
  /** SI value = (value + offset) * factor (+ ambient pressure for a gauge unit). */
  readonly factor: number;
  readonly offset: number;
  readonly gauge: boolean;
  readonly reference: VolumeReference | undefined;
}

const LB = 0.453_592_37; // [kg], exact
const INCH = 0.0254; // [m], exact
const G0 = 9.806_65; // [m/s2], standard gravity, exact
const PSI = (LB * G0) / (INCH * INCH); // [Pa] = 6894.757293168...
const MM_H2O = G0; // [Pa] per mm, conventional (water at 1000 kg/m3, standard gravity); NIST SP 811
const HP = 550 * 0.3048 * LB * G0; // [W], mechanical horsepower 550 ft lbf/s = 745.69987...

function def(
  name: string,
  dimension: Dimension,
  factor: number,
  aliases: readonly string[] = [],
  extra: { offset?: number; gauge?: boolean; reference?: VolumeReference } = {},
): UnitDef {
  return {
    name,
    aliases,
    dimension,
    factor,
    offset: extra.offset ?? 0,
    gauge: extra.gauge ?? false,
    reference: extra.reference,
  };
}

const gauge = { gauge: true };

/** Every accepted unit. Bare "bar", "kPa", "MPa", "Pa" and "mbar" are absolute, as DESIGN.md lists them. */
const UNITS: readonly UnitDef[] = [
  // pressure, absolute
  def('Pa', 'pressure', 1, ['Pa(a)', 'Paa']),
  def('kPa', 'pressure', 1e3, []),
  def('kPa(a)', 'pressure', 1e3, ['kPaa', 'kPa abs']),
  def('MPa', 'pressure', 1e6, []),
  def('MPa(a)', 'pressure', 1e6, ['MPaa', 'MPa abs']),
  def('bar', 'pressure', 1e5, []),
  def('bara', 'pressure', 1e5, ['bar abs', 'bar(abs)']),
  def('bar(a)', 'pressure', 1e5, []),
  def('mbar', 'pressure', 100, ['mbara', 'mbar(a)']),
  def('psia', 'pressure', PSI, ['psi(a)', 'psi abs']),
  def('atm', 'pressure', 101_325, []),
  // pressure, gauge (absolute = value * factor + ambient)
  def('Pa(g)', 'pressure', 1, ['Pag'], gauge),
  def('kPa(g)', 'pressure', 1e3, ['kPag'], gauge),
  def('MPa(g)', 'pressure', 1e6, ['MPag'], gauge),
  def('barg', 'pressure', 1e5, ['bar(g)', 'bar gauge'], gauge),
  def('mbarg', 'pressure', 100, ['mbar(g)'], gauge),
  def('psig', 'pressure', PSI, ['psi(g)'], gauge),
  // pressure difference: fan and draft pressures, never offset by ambient
  def('mmH2O', 'pressureDifference', MM_H2O, ['mmWC', 'mm H2O', 'mmWG']),
  def('inH2O', 'pressureDifference', INCH * 1000 * MM_H2O, ['inWC', 'in H2O', 'inWG']),
  // temperature
  def('K', 'temperature', 1, ['kelvin']),
  def('degC', 'temperature', 1, ['°C', 'C', 'celsius'], { offset: 273.15 }),
  def('degF', 'temperature', 5 / 9, ['°F', 'F', 'fahrenheit'], { offset: 459.67 }),
  // mass flow
  def('kg/s', 'massFlow', 1, []),
  def('kg/h', 'massFlow', 1 / 3600, ['kg/hr']),
  def('t/h', 'massFlow', 1000 / 3600, ['t/hr', 'tph']),
  def('lb/h', 'massFlow', LB / 3600, ['lb/hr', 'lbm/h']),
  def('klb/h', 'massFlow', (1000 * LB) / 3600, ['klb/hr', 'kpph']),
  // volume flow, actual
  def('m3/s', 'volumeFlow', 1, []),
  def('m3/h', 'volumeFlow', 1 / 3600, ['m3/hr', 'Am3/h']),
  // normal and standard volume flow: a distinct dimension, needs a molar mass to become mass flow
  def('Nm3/s', 'normalVolumeFlow', 1, [], { reference: 'normal' }),
  def('Nm3/h', 'normalVolumeFlow', 1 / 3600, ['Nm3/hr'], { reference: 'normal' }),
  def('Sm3/s', 'normalVolumeFlow', 1, [], { reference: 'standard' }),
  def('Sm3/h', 'normalVolumeFlow', 1 / 3600, ['Sm3/hr'], { reference: 'standard' }),
  // power
  def('W', 'power', 1, []),
  def('kW', 'power', 1e3, []),
  def('MW', 'power', 1e6, []),
  def('hp', 'power', HP, []),
  // specific energy
  def('J/kg', 'specificEnergy', 1, []),
  def('kJ/kg', 'specificEnergy', 1e3, []),
  // specific entropy
  def('J/(kg K)', 'specificEntropy', 1, ['J/kg/K', 'J/kgK']),
  def('kJ/(kg K)', 'specificEntropy', 1e3, ['kJ/kg/K', 'kJ/kgK']),
  // density
  def('kg/m3', 'density', 1, []),
  // fraction
  def('fraction', 'fraction', 1, ['frac']),
  def('%', 'fraction', 0.01, ['percent']),
];

/** Spelling-tolerant key: case, spaces, superscripts, degree signs and multiplication dots do not matter. */
function unitKey(unit: string): string {
  return unit
    .normalize('NFKC') // m³ -> m3, ℃ -> °C
    .toLowerCase()
    .replace(/[°º]/g, 'deg')
    .replace(/[\s·⋅*^]/g, '');
}

const BY_KEY: ReadonlyMap<string, UnitDef> = (() => {
  const map = new Map<string, UnitDef>();
  for (const u of UNITS) {
    for (const spelling of [u.name, ...u.aliases]) {
      const key = unitKey(spelling);
      const seen = map.get(key);
      // A clash would make a spelling mean two things: a programming error caught at load time.
      if (seen !== undefined && seen !== u) {
        throw new Error(`unit table: "${spelling}" clashes with "${seen.name}"`);
      }
      map.set(key, u);
    }
  }
  return map;
})();

/** Canonical names of the accepted units, for one dimension or all. */
export function acceptedUnits(dimension?: Dimension): readonly string[] {
  return UNITS.filter((u) => dimension === undefined || u.dimension === dimension).map((u) => u.name);
}

function lookup(unit: string, dimension?: Dimension): UnitDef {
  const key = unitKey(unit);
  if (key === 'psi') {
    // Plants write both psia and psig as "psi"; guessing would be off by one atmosphere.
    throw new UnitUnknownError(
      unit,
      acceptedUnits('pressure'),
      'Bare "psi" is ambiguous: write psia (absolute) or psig (gauge).',
    );
  }
  const u = BY_KEY.get(key);
  if (u === undefined) {
    throw new UnitUnknownError(unit, acceptedUnits(dimension));
  }
  if (dimension !== undefined && u.dimension !== dimension) {
    throw new UnitUnknownError(
      unit,
      acceptedUnits(dimension),
      `"${unit}" is a ${u.dimension} unit, not ${dimension}.`,
    );
  }
  return u;
}

/** The dimension a unit measures; UNIT_UNKNOWN when it is not accepted. */
export function unitDimension(unit: string): Dimension {
  return lookup(unit).dimension;
}

/** True when the unit is a gauge pressure (needs the ambient pressure to become absolute). */
export function isGaugeUnit(unit: string): boolean {
  return lookup(unit).gauge;
}

/** The reference state of a normal or standard volume unit (Nm3/h, Sm3/h); undefined for other units. */
export function volumeReference(unit: string): VolumeReference | undefined {
  return lookup(unit).reference;
}

/** The canonical spelling of a unit (e.g. "barG" -> "barg", "deg C" -> "degC"). */
export function canonicalUnit(unit: string): string {
  return lookup(unit).name;
}

export interface UnitOptions {
  /** Ambient (barometric) pressure [Pa], needed for gauge units. */
  readonly ambientPressure?: number | undefined;
  /** When given, the unit must measure this dimension (UNIT_UNKNOWN otherwise, listing its units). */
  readonly dimension?: Dimension | undefined;
}

function ambientOf(u: UnitDef, value: number, options: UnitOptions | undefined): number {
  const ambient = options?.ambientPressure;
  if (ambient === undefined) throw new AmbientPressureRequiredError(u.name, value);
  if (!Number.isFinite(ambient) || ambient <= 0) {
    throw new BadQuantityError(String(ambient), 'ambient pressure must be a positive number of pascals');
  }
  return ambient;
}

/** Refuse values that no instrument can truly read: below absolute zero, or a negative absolute pressure. */
function checkPhysical(u: UnitDef, value: number, si: number): void {
  if (u.dimension === 'temperature' && si < 0) {
    throw new BadQuantityError(`${value} ${u.name}`, `is ${si} K, below absolute zero`);
  }
  if (u.dimension === 'pressure' && si < 0) {
    throw new BadQuantityError(`${value} ${u.name}`, `is an absolute pressure of ${si} Pa, below zero`);
  }
}

/** Converts a value in the given unit to SI (see SI_UNIT; pressures come out absolute). */
export function toSI(value: number, unit: string, options?: UnitOptions): number {
  const u = lookup(unit, options?.dimension);
  if (!Number.isFinite(value)) throw new BadQuantityError(`${value} ${unit}`, 'is not a finite number');
  let si = (value + u.offset) * u.factor;
  if (u.gauge) si += ambientOf(u, value, options);
  checkPhysical(u, value, si);
  return si;
}

/** Converts an SI value (see SI_UNIT; pressures absolute) into the given unit. */
export function fromSI(valueSI: number, unit: string, options?: UnitOptions): number {
  const u = lookup(unit, options?.dimension);
  if (!Number.isFinite(valueSI))
    throw new BadQuantityError(`${valueSI} ${SI_UNIT[u.dimension]}`, 'is not finite');
  const absolute = u.gauge ? valueSI - ambientOf(u, valueSI, options) : valueSI;
  return absolute / u.factor - u.offset;
}

/** Converts between two units of one dimension (and, for normal volumes, of one reference state). */
export function convertUnit(value: number, from: string, to: string, options?: UnitOptions): number {
  const a = lookup(from, options?.dimension);
  const b = lookup(to, a.dimension);
  if (a.reference !== b.reference) {
    throw new BadQuantityError(
      `${value} ${from}`,
      `a ${a.reference} volume cannot become a ${b.reference} volume without the gas: convert through mass flow`,
    );
  }
  return fromSI(toSI(value, from, options), to, options);
}

/** A parsed reading: what was written and its SI value. */
export interface Quantity {
  /** The number as written, in `unit`. */
  readonly value: number;
  /** Canonical spelling of the unit. */
  readonly unit: string;
  readonly dimension: Dimension;
  /** The value in SI (SI_UNIT[dimension]); pressures absolute. */
  readonly valueSI: number;
  /** True when written as a gauge pressure. */
  readonly gauge: boolean;
  /** Reference state of a normal or standard volume flow; undefined otherwise. */
  readonly reference: VolumeReference | undefined;
}

const NUMBER_THEN_UNIT = /^([+-]?(?:\d+(?:\.\d*)?|\.\d+)(?:[eE][+-]?\d+)?)\s*(.*)$/;

/**
 * Reads "40 barg", "12.5 t/h", "350 degC", "-0.2 kPa(g)" and the like. A decimal comma is refused
 * rather than guessed (it could be a thousands separator).
 */
export function parseQuantity(text: string, options?: UnitOptions): Quantity {
  const cleaned = text.trim().replace(/\u2212/g, '-'); // typographic minus sign
  const match = NUMBER_THEN_UNIT.exec(cleaned);
  if (match === null) {
    throw new BadQuantityError(text, 'expected a number followed by a unit, e.g. "40 barg"');
  }
  const unitText = (match[2] ?? '').trim();
  if (unitText === '') throw new BadQuantityError(text, 'has no unit');
  if (/^[,.]\d/.test(unitText)) throw new BadQuantityError(text, 'use a decimal point, not a comma');
  const value = Number(match[1]);
  const u = lookup(unitText, options?.dimension);
  return {
    value,
    unit: u.name,
    dimension: u.dimension,
    valueSI: toSI(value, u.name, options),
    gauge: u.gauge,
    reference: u.reference,
  };
}

/** Ideal-gas molar volume [m3/mol] at a volume reference state: R T / p. */
export function idealGasMolarVolume(reference: VolumeReference): number {
  const { T, p } = VOLUME_REFERENCE_STATE[reference];
  return (MOLAR_GAS_CONSTANT * T) / p;
}

/**
 * Mass flow [kg/s] from a normal or standard volume flow [m3/s at the reference state] and the
 * gas molar mass [kg/mol], with the ideal-gas molar volume at the reference state (the gas
 * industry convention; real-gas compressibility at 1 atm changes it by well under 1 % for air
 * and natural gas).
 */
export function normalVolumeFlowToMassFlow(
  qN_m3_per_s: number,
  molarMass_kg_per_mol: number,
  reference: VolumeReference,
): number {
  if (!Number.isFinite(qN_m3_per_s))
    throw new BadQuantityError(String(qN_m3_per_s), 'volume flow is not finite');
  if (!(molarMass_kg_per_mol > 0) || molarMass_kg_per_mol > 1) {
    throw new BadQuantityError(
      String(molarMass_kg_per_mol),
      'molar mass must be in kg/mol (e.g. 0.028965 for air), positive and below 1',
    );
  }
  return (qN_m3_per_s / idealGasMolarVolume(reference)) * molarMass_kg_per_mol;
}
