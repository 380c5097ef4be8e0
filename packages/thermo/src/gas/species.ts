import { CompositionSumError, UnknownSpeciesError } from './errors.js';
import type { SpeciesId } from './nasa7.js';

export type { SpeciesId } from './nasa7.js';

/**
 * Standard atomic weights [g/mol], IUPAC 2007 values (Wieser and Berglund, Pure Appl. Chem. 81,
 * 2009), the ones NASA/TP-2002-211556 and most property tables of its time use.
 */
const ATOMIC_WEIGHT = { H: 1.00794, He: 4.002602, C: 12.0107, N: 14.0067, O: 15.9994, S: 32.065, Ar: 39.948 };
type Element = keyof typeof ATOMIC_WEIGHT;

export interface SpeciesData {
  readonly id: SpeciesId;
  /** Plain name, e.g. "nitrogen". */
  readonly name: string;
  /** Other accepted spellings (matched case-insensitively, ignoring spaces, "-" and "_"). */
  readonly aliases: readonly string[];
  /** Molar mass [kg/mol], from the formula and ATOMIC_WEIGHT. */
  readonly molarMass: number;
  /** Critical temperature [K]. */
  readonly Tc: number;
  /** Critical pressure [Pa]. */
  readonly Pc: number;
  /** Pitzer acentric factor [-]. */
  readonly omega: number;
}

function molarMass(atoms: Partial<Record<Element, number>>): number {
  let m = 0;
  for (const [el, n] of Object.entries(atoms) as [Element, number][]) m += ATOMIC_WEIGHT[el] * n;
  return m / 1000;
}

/**
 * Critical constants and acentric factors: Poling, Prausnitz and O'Connell, The Properties of
 * Gases and Liquids, 5th ed. (2001), Appendix A, Table A.1 (Tc [K], Pc [bar], omega), written
 * here from memory of that table and not re-read against the printed page: a check against the
 * book is still owed. Pc is converted from bar (x 1e5).
 * Partial cross-check (2026-12) against reference equations of state, which fix their own critical
 * points: CH4 190.564 K, 45.992 bar, omega 0.01142 (Setzmann and Wagner 1991, as NIST REFPROP's
 * METHANE.FLD lists them) agrees with the rounded values below; H2O 647.096 K, 220.64 bar (IAPWS-95,
 * python3-iapws) agrees in Pc, while the Tc below is 0.04 K higher, a difference Peng-Robinson does
 * not resolve. The other species are not yet checked.
 */
function sp(
  id: SpeciesId,
  name: string,
  aliases: readonly string[],
  atoms: Partial<Record<Element, number>>,
  Tc: number,
  PcBar: number,
  omega: number,
): SpeciesData {
  return { id, name, aliases, molarMass: molarMass(atoms), Tc, Pc: PcBar * 1e5, omega };
}

export const SPECIES: Readonly<Record<SpeciesId, SpeciesData>> = {
  N2: sp('N2', 'nitrogen', ['nitrogen'], { N: 2 }, 126.2, 33.98, 0.037),
  O2: sp('O2', 'oxygen', ['oxygen'], { O: 2 }, 154.58, 50.43, 0.022),
  Ar: sp('Ar', 'argon', ['argon'], { Ar: 1 }, 150.86, 48.98, -0.002),
  CO2: sp('CO2', 'carbon dioxide', ['carbon dioxide', 'carbondioxide'], { C: 1, O: 2 }, 304.12, 73.74, 0.225),
  H2O: sp(
    'H2O',
    'water',
    ['water', 'steam', 'water vapour', 'water vapor'],
    { H: 2, O: 1 },
    647.14,
    220.64,
    0.344,
  ),
  CH4: sp('CH4', 'methane', ['methane', 'C1'], { C: 1, H: 4 }, 190.56, 45.99, 0.011),
  C2H6: sp('C2H6', 'ethane', ['ethane', 'C2'], { C: 2, H: 6 }, 305.32, 48.72, 0.099),
  C3H8: sp('C3H8', 'propane', ['propane', 'C3'], { C: 3, H: 8 }, 369.83, 42.48, 0.152),
  'n-C4H10': sp(
    'n-C4H10',
    'n-butane',
    ['nC4', 'butane', 'n-butane', 'nC4H10'],
    { C: 4, H: 10 },
    425.12,
    37.96,
    0.2,
  ),
  'i-C4H10': sp(
    'i-C4H10',
    'isobutane',
    ['iC4', 'isobutane', 'i-butane', 'iC4H10'],
    { C: 4, H: 10 },
    407.85,
    36.4,
    0.186,
  ),
  'n-C5H12': sp(
    'n-C5H12',
    'n-pentane',
    ['nC5', 'pentane', 'n-pentane', 'nC5H12'],
    { C: 5, H: 12 },
    469.7,
    33.7,
    0.252,
  ),
  'i-C5H12': sp(
    'i-C5H12',
    'isopentane',
    ['iC5', 'isopentane', 'i-pentane', 'iC5H12'],
    { C: 5, H: 12 },
    460.39,
    33.81,
    0.229,
  ),
  H2: sp('H2', 'hydrogen', ['hydrogen'], { H: 2 }, 33.19, 13.13, -0.216),
  CO: sp(
    'CO',
    'carbon monoxide',
    ['carbon monoxide', 'carbonmonoxide'],
    { C: 1, O: 1 },
    132.85,
    34.94,
    0.045,
  ),
  He: sp('He', 'helium', ['helium'], { He: 1 }, 5.19, 2.27, -0.39),
  H2S: sp(
    'H2S',
    'hydrogen sulfide',
    ['hydrogen sulfide', 'hydrogen sulphide'],
    { H: 2, S: 1 },
    373.4,
    89.63,
    0.09,
  ),
};

const ALL_IDS = Object.keys(SPECIES) as SpeciesId[];

function aliasKey(name: string): string {
  return name.toLowerCase().replace(/[\s_-]/g, '');
}

const BY_ALIAS: ReadonlyMap<string, SpeciesId> = (() => {
  const map = new Map<string, SpeciesId>();
  for (const id of ALL_IDS) {
    for (const alias of [id, ...SPECIES[id].aliases]) {
      const key = aliasKey(alias);
      const seen = map.get(key);
      if (seen !== undefined && seen !== id)
        throw new Error(`species table: alias "${alias}" clashes with ${seen}`);
      map.set(key, id);
    }
  }
  return map;
})();

/** Species the gas models know, each with its accepted aliases. */
export function speciesList(): readonly {
  readonly id: SpeciesId;
  readonly name: string;
  readonly aliases: readonly string[];
}[] {
  return ALL_IDS.map((id) => ({ id, name: SPECIES[id].name, aliases: SPECIES[id].aliases }));
}

/** The species id for a name or alias ("nC4", "n-C4H10", "butane" -> "n-C4H10"); GAS_UNKNOWN_SPECIES otherwise. */
export function resolveSpecies(name: string): SpeciesId {
  const id = BY_ALIAS.get(aliasKey(name));
  if (id === undefined) {
    throw new UnknownSpeciesError(
      name,
      ALL_IDS.map((i) => `${i} (${SPECIES[i].aliases.join(', ')})`),
    );
  }
  return id;
}

export interface NormaliseOptions {
  /** Whether the numbers are mole fractions (sum 1) or mole percent (sum 100). Default 'fraction'. */
  readonly unit?: 'fraction' | 'percent';
  /** Allowed relative deviation of the sum before normalising. Default 0.01 (1 %). */
  readonly tolerance?: number;
}

/**
 * Mole fractions keyed by species id, summing to exactly 1. Aliases are resolved and merged,
 * zero entries dropped. A sum off by more than the tolerance (1 % by default), a negative or
 * non-finite entry is GAS_COMPOSITION_SUM; an unknown name is GAS_UNKNOWN_SPECIES.
 */
export function normaliseComposition(
  composition: Readonly<Record<string, number>>,
  options?: NormaliseOptions,
): Readonly<Partial<Record<SpeciesId, number>>> {
  const expected = options?.unit === 'percent' ? 100 : 1;
  const tolerance = options?.tolerance ?? 0.01;
  const merged: Partial<Record<SpeciesId, number>> = {};
  let sum = 0;
  for (const [name, value] of Object.entries(composition)) {
    const id = resolveSpecies(name);
    if (!Number.isFinite(value) || value < 0) {
      throw new CompositionSumError(
        sum,
        expected,
        tolerance,
        `Mole fraction of ${name} is ${value}: must be >= 0.`,
      );
    }
    merged[id] = (merged[id] ?? 0) + value;
    sum += value;
  }
  if (!(Math.abs(sum - expected) <= tolerance * expected)) {
    throw new CompositionSumError(sum, expected, tolerance);
  }
  const out: Partial<Record<SpeciesId, number>> = {};
  for (const id of ALL_IDS) {
    const v = merged[id];
    if (v !== undefined && v > 0) out[id] = v / sum;
  }
  return Object.freeze(out);
}
