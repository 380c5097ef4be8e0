import { ConvergenceError, OutOfRangeError } from '../errors.js';
import type { Fluid, FluidState } from '../fluid.js';
import { cpR, hR, NASA_STANDARD_PRESSURE, NASA_T_MID, NASA7, s0R } from './nasa7.js';
import { PengRobinsonMixture, type PRResult, R_MOLAR } from './peng-robinson.js';
import {
  type NormaliseOptions,
  normaliseComposition,
  SPECIES,
  type SpeciesData,
  type SpeciesId,
} from './species.js';

/**
 * A gas of fixed composition. Reference state: h = 0 for the ideal gas at 298.15 K (enthalpies
 * of formation left out, so no combustion is implied); s is the third-law entropy of the ideal
 * gas at p0 = 1 bar plus the ideal mixing term, as in the NASA tables.
 */
export interface GasModel extends Fluid {
  readonly kind: 'gas';
  /** Which equation of state gives the departure from the ideal gas. */
  readonly eos: 'ideal' | 'peng-robinson';
  /** Normalised mole fractions by species id. */
  readonly composition: Readonly<Partial<Record<SpeciesId, number>>>;
  /** Molar mass [kg/mol]. */
  readonly molarMass: number;
  /** Specific gas constant R = R_molar/M [J/(kg K)]. */
  readonly R: number;
  /** Lowest and highest temperature the model accepts [K]. */
  readonly Tmin: number;
  readonly Tmax: number;
  /** Highest pressure the model accepts [Pa]. */
  readonly pMax: number;
  /** Caveats that apply to this model (extrapolated fits, single-phase assumption). */
  readonly notes: readonly string[];
  /** Isobaric specific heat capacity [J/(kg K)] at T [K], p [Pa]. */
  cp(T: number, p: number): number;
  /** Compressibility factor Z = p v/(R T) [-] at p [Pa], T [K]; 1 for the ideal gas. */
  compressibility(p: number, T: number): number;
}

const T_REF = 298.15; // [K], h = 0 here
/** Lowest temperature the models accept [K]: the lower limit of the NASA fits of most species. */
const T_LOW = 200;
/** Highest pressure accepted [Pa]: 100 MPa, well beyond plant gas service. */
const P_MAX = 100e6;

export interface MixtureOptions extends NormaliseOptions {
  /** Binary interaction parameters for Peng-Robinson, e.g. { 'CH4/CO2': 0.1 }; 0 when absent. */
  readonly kij?: Readonly<Record<string, number>>;
}

class GasMixture implements GasModel {
  readonly kind = 'gas' as const;
  readonly molarMass: number;
  readonly R: number;
  readonly Tmin: number;
  readonly Tmax: number;
  readonly pMax = P_MAX;
  readonly notes: readonly string[];
  /** Mole-fraction-weighted NASA coefficients, per range. */
  private readonly low = new Float64Array(7);
  private readonly high = new Float64Array(7);
  /** H/R of the mixture at T_REF [K], subtracted so h_ig(T_REF) = 0. */
  private readonly hRef: number;
  /** -sum x ln x, the ideal mixing entropy over R. */
  private readonly mixS: number;
  private readonly pr: PengRobinsonMixture | undefined;
  private readonly res: PRResult = { Z: 1, hRes: 0, sRes: 0, cpRes: 0 };

  constructor(
    readonly name: string,
    readonly composition: Readonly<Partial<Record<SpeciesId, number>>>,
    readonly eos: 'ideal' | 'peng-robinson',
    kij: Readonly<Record<string, number>> | undefined,
  ) {
    const ids = Object.keys(composition) as SpeciesId[];
    const xs = ids.map((id) => composition[id]!);
    const species = ids.map((id) => SPECIES[id]);
    let M = 0;
    let mixS = 0;
    let Tmax = Number.POSITIVE_INFINITY;
    const notes: string[] = [];
    ids.forEach((id, k) => {
      const x = xs[k]!;
      const nasa = NASA7[id];
      M += x * SPECIES[id].molarMass;
      mixS -= x * Math.log(x);
      Tmax = Math.min(Tmax, nasa.Tmax);
      for (let i = 0; i < 7; i++) {
        this.low[i]! += x * nasa.low[i]!;
        this.high[i]! += x * nasa.high[i]!;
      }
      if (nasa.Tmin > T_LOW) {
        // A smooth 4th-degree fit carried 100 K below its start: cp stays within about 1 % there
        // (checked against its own trend, not a table); said here rather than done silently.
        notes.push(`${id}: NASA fit starts at ${nasa.Tmin} K; used down to ${T_LOW} K by extrapolation`);
      }
    });
    if (eos === 'peng-robinson')
      notes.push('Peng-Robinson: single gas phase assumed (vapour-like root); no dew-point check');
    this.molarMass = M;
    this.R = R_MOLAR / M;
    this.Tmin = T_LOW;
    this.Tmax = Tmax;
    this.mixS = mixS;
    this.hRef = hR(this.low, T_REF);
    this.notes = notes;
    this.pr =
      eos === 'peng-robinson'
        ? new PengRobinsonMixture(species, xs, (a: SpeciesData, b: SpeciesData) => kijOf(kij, a.id, b.id))
        : undefined;
  }

  private check(p: number, T: number): void {
    if (!(T >= this.Tmin && T <= this.Tmax)) {
      throw new OutOfRangeError('temperature T', T, 'K', this.Tmin, this.Tmax, this.name);
    }
    if (!(p > 0 && p <= P_MAX)) throw new OutOfRangeError('pressure p', p, 'Pa', 0, P_MAX, this.name);
  }

  private coeffs(T: number): Float64Array {
    return T < NASA_T_MID ? this.low : this.high;
  }

  /** Ideal-gas enthalpy [J/kg] at T [K]. */
  private hIdeal(T: number): number {
    return this.R * (hR(this.coeffs(T), T) - this.hRef);
  }

  /** Ideal-gas entropy [J/(kg K)] at T [K], p [Pa]. */
  private sIdeal(T: number, p: number): number {
    return this.R * (s0R(this.coeffs(T), T) + this.mixS - Math.log(p / NASA_STANDARD_PRESSURE));
  }

  private departures(p: number, T: number): PRResult | undefined {
    return this.pr?.evaluate(p, T, this.res);
  }

  statePT(p: number, T: number): FluidState {
    this.check(p, T);
    const d = this.departures(p, T);
    const perKg = 1 / this.molarMass;
    return {
      p,
      T,
      h: this.hIdeal(T) + (d === undefined ? 0 : d.hRes * perKg),
      s: this.sIdeal(T, p) + (d === undefined ? 0 : d.sRes * perKg),
      v: ((d === undefined ? 1 : d.Z) * this.R * T) / p,
    };
  }

  cp(T: number, p: number): number {
    this.check(p, T);
    const ideal = this.R * cpR(this.coeffs(T), T);
    const d = this.departures(p, T);
    return d === undefined ? ideal : ideal + d.cpRes / this.molarMass;
  }

  compressibility(p: number, T: number): number {
    this.check(p, T);
    return this.departures(p, T)?.Z ?? 1;
  }

  statePH(p: number, h: number): FluidState {
    return this.solveT(p, h, 'h');
  }

  statePS(p: number, s: number): FluidState {
    return this.solveT(p, s, 's');
  }

  /**
   * T from p and h (or s): Newton on T with dh/dT = cp (ds/dT = cp/T), kept inside a bracket
   * that shrinks each step and falls back to bisection, so the small step of the NASA fits at
   * 1000 K cannot trap it. Capped at 60 iterations.
   */
  private solveT(p: number, target: number, what: 'h' | 's'): FluidState {
    if (!(p > 0 && p <= P_MAX)) throw new OutOfRangeError('pressure p', p, 'Pa', 0, P_MAX, this.name);
    if (!Number.isFinite(target)) {
      throw new OutOfRangeError(
        what === 'h' ? 'enthalpy h' : 'entropy s',
        target,
        '',
        -Infinity,
        Infinity,
        this.name,
      );
    }
    const value = (T: number) => {
      const st = this.statePT(p, T);
      return what === 'h' ? st.h : st.s;
    };
    let lo = this.Tmin;
    let hi = this.Tmax;
    const fLo = value(lo) - target;
    const fHi = value(hi) - target;
    if (fLo > 0 || fHi < 0) {
      const quantity = what === 'h' ? 'enthalpy h' : 'entropy s';
      const unit = what === 'h' ? 'J/kg' : 'J/(kg K)';
      throw new OutOfRangeError(
        quantity,
        target,
        unit,
        fLo + target,
        fHi + target,
        `${this.name} at p = ${p} Pa`,
      );
    }
    // Start from the constant-cp estimate around 298.15 K.
    const cp0 = this.cp(T_REF, p);
    let T =
      what === 'h' ? T_REF + (target - value(T_REF)) / cp0 : T_REF * Math.exp((target - value(T_REF)) / cp0);
    if (!(T > lo && T < hi)) T = 0.5 * (lo + hi);
    let residual = Number.NaN;
    for (let it = 0; it < 60; it++) {
      const st = this.statePT(p, T);
      residual = (what === 'h' ? st.h : st.s) - target;
      if (residual > 0) hi = T;
      else lo = T;
      const slope = what === 'h' ? this.cp(T, p) : this.cp(T, p) / T;
      let next = T - residual / slope;
      if (!(next > lo && next < hi)) next = 0.5 * (lo + hi);
      if (Math.abs(next - T) <= 1e-11 * T || hi - lo <= 1e-11 * T) {
        return this.statePT(p, next);
      }
      T = next;
    }
    throw new ConvergenceError(`${this.name}: T from (p, ${what})`, 60, residual);
  }
}

function kijOf(kij: Readonly<Record<string, number>> | undefined, a: SpeciesId, b: SpeciesId): number {
  if (kij === undefined) return 0;
  return kij[`${a}/${b}`] ?? kij[`${b}/${a}`] ?? 0;
}

function describe(composition: Readonly<Partial<Record<SpeciesId, number>>>): string {
  return Object.entries(composition)
    .map(([id, x]) => `${id} ${(x * 100).toPrecision(4)}%`)
    .join(', ');
}

/** Ideal-gas mixture from NASA 7-coefficient polynomials. Composition by mole fraction (names or aliases). */
export function idealGasMixture(
  composition: Readonly<Record<string, number>>,
  name?: string,
  options?: NormaliseOptions,
): GasModel {
  const x = normaliseComposition(composition, options);
  return new GasMixture(name ?? `ideal gas (${describe(x)})`, x, 'ideal', undefined);
}

/**
 * Real-gas mixture: NASA ideal-gas properties plus Peng-Robinson (1976) departure functions.
 * Binary interaction parameters k_ij are 0 unless given in options.kij as "A/B" keys.
 */
export function pengRobinsonMixture(
  composition: Readonly<Record<string, number>>,
  options?: MixtureOptions & { readonly name?: string },
): GasModel {
  const x = normaliseComposition(composition, options);
  const kij: Record<string, number> = {};
  for (const [pair, value] of Object.entries(options?.kij ?? {})) {
    const [a, b] = pair.split('/');
    if (a === undefined || b === undefined) continue;
    // Resolve aliases so "methane/CO2" works; normaliseComposition already vetted the ids.
    const ids = Object.keys(normaliseComposition({ [a]: 0.5, [b]: 0.5 }));
    kij[ids.join('/')] = value;
  }
  return new GasMixture(options?.name ?? `Peng-Robinson gas (${describe(x)})`, x, 'peng-robinson', kij);
}
