import { ConvergenceError, OutOfRangeError } from '../errors.js';
import type { Fluid, FluidState } from '../fluid.js';
import { GasStateUndeterminedError } from './errors.js';
import { NASA_STANDARD_PRESSURE, NASA_T_MID, NASA7 } from './nasa7.js';
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
  /**
   * State from p [Pa] and h [J/kg]. TGuess [K], optional, is where the iteration starts (e.g. the
   * previous sample's answer); without it the ideal-gas solution is the start.
   */
  statePH(p: number, h: number, TGuess?: number): FluidState;
  /** State from p [Pa] and s [J/(kg K)]; TGuess [K] as for statePH. */
  statePS(p: number, s: number, TGuess?: number): FluidState;
}

const T_REF = 298.15; // [K], h = 0 here
/**
 * Module-local copies of the NASA constants for the hot paths: read as plain constants rather
 * than imported bindings, which a transpiler (tsx, vitest) may turn into getter calls.
 */
const T_MID = NASA_T_MID; // [K]
const P0 = NASA_STANDARD_PRESSURE; // [Pa]
/** Lowest temperature the models accept [K]: the lower limit of the NASA fits of most species. */
const T_LOW = 200;
/** Highest pressure accepted [Pa]: 100 MPa, well beyond plant gas service. */
const P_MAX = 100e6;

/**
 * Newton stops when its next step in T is below this fraction of T (3e-5 K at 300 K). The step is
 * then taken by linear extrapolation: Newton's error after it is about |f''/(2 f')| step^2, with
 * f''/f' of order 1/T for h and s along an isobar, so about 1e-12 K, far below the 1e-7 K that
 * round trips must meet.
 */
const STEP_TOL = 1e-7;
/** Newton steps before the solver falls back to bisection of the bracket it has kept. */
const NEWTON_ITERATIONS = 12;
/** Total cap on iterations (Newton plus bisection): bisection of 200..6000 K to 1e-11 T takes ~40. */
const MAX_ITERATIONS = 60;
/**
 * Largest mismatch accepted where h or s steps in T, relative to R T for h and to R for s: twice
 * the seam of the NASA fits at 1000 K (hR within 0.05 K at T = 1000 K, i.e. 5e-5 R T; S0/R
 * within 1e-4).
 */
const STEP_MISMATCH = 2e-4;
/** Bisection stops when the bracket is narrower than this fraction of T (a step of h or s in T). */
const BRACKET_TOL = 1e-11;

/** Slots of the scratch array written by GasMixture.props(). */
const H = 0; // h [J/kg]
const S = 1; // s [J/(kg K)]
const CP = 2; // cp [J/(kg K)]
const V = 3; // v [m3/kg]
const DVDT = 4; // (dv/dT)_p [m3/(kg K)]

/**
 * NASA 7-term coefficients of one range rearranged for Horner's rule (NASA/TP-2002-211556
 * section 2): [0..4] cp/R = a1..a5; [5..10] H/R = T (a1 + a2/2 T + a3/3 T^2 + a4/4 T^3 + a5/5 T^4)
 * + a6; [11..16] S0/R = a1 ln T + T (a2 + a3/2 T + a4/3 T^2 + a5/4 T^3) + a7.
 */
function hornerCoefficients(a: Float64Array): Float64Array {
  const [a1 = 0, a2 = 0, a3 = 0, a4 = 0, a5 = 0, a6 = 0, a7 = 0] = a;
  return Float64Array.of(
    a1,
    a2,
    a3,
    a4,
    a5,
    a1,
    a2 / 2,
    a3 / 3,
    a4 / 4,
    a5 / 5,
    a6,
    a1,
    a2,
    a3 / 2,
    a4 / 3,
    a5 / 4,
    a7,
  );
}

/** cp/R [-] at T [K] (coefficients laid out by hornerCoefficients). */
function hornerCpR(c: Float64Array, T: number): number {
  return c[0]! + T * (c[1]! + T * (c[2]! + T * (c[3]! + T * c[4]!)));
}

/** H/R [K] at T [K], formation enthalpy included. */
function hornerHR(c: Float64Array, T: number): number {
  return T * (c[5]! + T * (c[6]! + T * (c[7]! + T * (c[8]! + T * c[9]!)))) + c[10]!;
}

/** S0/R [-] at T [K] and p0. */
function hornerSR(c: Float64Array, T: number): number {
  return c[11]! * Math.log(T) + T * (c[12]! + T * (c[13]! + T * (c[14]! + T * c[15]!))) + c[16]!;
}

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
  /** Mole-fraction-weighted NASA coefficients per range, in the layout of hornerCoefficients(). */
  private readonly cLow: Float64Array;
  private readonly cHigh: Float64Array;
  /** H/R of the mixture at T_REF [K], subtracted so h_ig(T_REF) = 0. */
  private readonly hRef: number;
  /** -sum x ln x, the ideal mixing entropy over R. */
  private readonly mixS: number;
  /** Ideal-gas cp [J/(kg K)] and s at p0 [J/(kg K)] at T_REF, for the first guess of T. */
  private readonly cpRef: number;
  private readonly sRef: number;
  private readonly pr: PengRobinsonMixture | undefined;
  private readonly res: PRResult = { Z: 1, hRes: 0, sRes: 0, cpRes: 0, dvdT: 0 };
  /** Scratch written by props() (slots H, S, CP, V, DVDT): no allocation inside the solvers. */
  private readonly w = new Float64Array(5);

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
    const low = new Float64Array(7);
    const high = new Float64Array(7);
    ids.forEach((id, k) => {
      const x = xs[k]!;
      const nasa = NASA7[id];
      M += x * SPECIES[id].molarMass;
      mixS -= x * Math.log(x);
      Tmax = Math.min(Tmax, nasa.Tmax);
      for (let i = 0; i < 7; i++) {
        low[i]! += x * nasa.low[i]!;
        high[i]! += x * nasa.high[i]!;
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
    this.cLow = hornerCoefficients(low);
    this.cHigh = hornerCoefficients(high);
    this.hRef = hornerHR(this.cLow, T_REF);
    this.cpRef = this.R * hornerCpR(this.cLow, T_REF);
    this.sRef = this.R * (hornerSR(this.cLow, T_REF) + mixS);
    this.notes = notes;
    this.pr =
      eos === 'peng-robinson'
        ? new PengRobinsonMixture(species, xs, (a: SpeciesData, b: SpeciesData) => kijOf(kij, a.id, b.id))
        : undefined;
  }

  /**
   * h, s, cp, v and (dv/dT)_p at p [Pa], T [K] into the scratch w; lnP = ln(p/p0), passed in so
   * that a solver along one isobar takes the logarithm once. real = false leaves out the
   * Peng-Robinson departures (used for the first guess). No range check: callers check.
   */
  private props(p: number, T: number, lnP: number, real: boolean): void {
    const c = T < T_MID ? this.cLow : this.cHigh;
    const R = this.R;
    let h = R * (hornerHR(c, T) - this.hRef);
    let s = R * (hornerSR(c, T) + this.mixS - lnP);
    let cp = R * hornerCpR(c, T);
    let v = (R * T) / p;
    let dvdT = R / p;
    const pr = this.pr;
    if (real && pr !== undefined) {
      const d = pr.evaluate(p, T, this.res);
      const perKg = 1 / this.molarMass;
      h += d.hRes * perKg;
      s += d.sRes * perKg;
      cp += d.cpRes * perKg;
      v *= d.Z;
      dvdT = d.dvdT * perKg;
    }
    const w = this.w;
    w[H] = h;
    w[S] = s;
    w[CP] = cp;
    w[V] = v;
    w[DVDT] = dvdT;
  }

  private check(p: number, T: number): void {
    if (!(T >= this.Tmin && T <= this.Tmax)) {
      throw new OutOfRangeError('temperature T', T, 'K', this.Tmin, this.Tmax, this.name);
    }
    if (!(p > 0 && p <= P_MAX)) throw new OutOfRangeError('pressure p', p, 'Pa', 0, P_MAX, this.name);
  }

  /** The state at p, T from the scratch just written by props(p, T, ...). */
  private stateFromScratch(p: number, T: number): FluidState {
    const w = this.w;
    return { p, T, h: w[H]!, s: w[S]!, v: w[V]! };
  }

  statePT(p: number, T: number): FluidState {
    this.check(p, T);
    this.props(p, T, Math.log(p / P0), true);
    return this.stateFromScratch(p, T);
  }

  cp(T: number, p: number): number {
    this.check(p, T);
    this.props(p, T, Math.log(p / P0), true);
    return this.w[CP]!;
  }

  compressibility(p: number, T: number): number {
    this.check(p, T);
    return this.pr === undefined ? 1 : this.pr.evaluate(p, T, this.res).Z;
  }

  statePH(p: number, h: number, TGuess?: number): FluidState {
    return this.solveT(p, h, true, TGuess);
  }

  statePS(p: number, s: number, TGuess?: number): FluidState {
    return this.solveT(p, s, false, TGuess);
  }

  /**
   * First guess of T for h (isH) or s on the isobar lnP = ln(p/p0): the ideal-gas part alone,
   * started from T_REF with cp(T_REF) (for s this is the isentropic relation
   * T = T_REF exp((s - s_ig(T_REF, p))/cp)), then a few Newton steps on the ideal-gas h or s.
   * For the ideal gas the closed form is enough: the full solve follows anyway. The guess is kept
   * inside the model's range; it is only a starting point, the solve checks the range itself.
   */
  private guess(target: number, isH: boolean, lnP: number): number {
    let T = isH
      ? T_REF + target / this.cpRef
      : T_REF * Math.exp((target - (this.sRef - this.R * lnP)) / this.cpRef);
    if (this.pr === undefined) return this.intoRange(T);
    const w = this.w;
    for (let it = 0; it < 6; it++) {
      T = this.intoRange(T);
      this.props(P0, T, lnP, false);
      const step = isH ? (w[H]! - target) / w[CP]! : T * -Math.expm1((target - w[S]!) / w[CP]!);
      T -= step;
      if (Math.abs(step) < 1e-2) break; // 10 mK is plenty for a starting point
    }
    return this.intoRange(T);
  }

  /** T [K] moved into [Tmin, Tmax]; for starting guesses only, never for a result. */
  private intoRange(T: number): number {
    if (!(T > this.Tmin)) return this.Tmin;
    return Math.min(T, this.Tmax);
  }

  /**
   * T from p and h (isH) or s: Newton with the analytic slopes (dh/dT)_p = cp and
   * (ds/d ln T)_p = cp, cp including the departure; for s the step is taken in ln T, where s is
   * nearly linear (exactly so for constant cp), which saves about one evaluation of the
   * departures per call at pipeline pressures (3 instead of 4). Every evaluation also narrows a bracket
   * [lo, hi] (h and s rise with T along an isobar); if Newton leaves it, or has not converged
   * after NEWTON_ITERATIONS, the solver bisects it, so a step in h or s (the NASA ranges meet at
   * 1000 K with a small jump; the vapour-like Peng-Robinson root can vanish) cannot trap it. An end
   * of the range is evaluated only when the solution is pushed towards it, and a target beyond it
   * is refused (THERMO_OUT_OF_RANGE), never clamped. Capped at MAX_ITERATIONS (THERMO_NO_CONVERGENCE).
   */
  private solveT(p: number, target: number, isH: boolean, TGuess: number | undefined): FluidState {
    if (!(p > 0 && p <= P_MAX)) throw new OutOfRangeError('pressure p', p, 'Pa', 0, P_MAX, this.name);
    if (!Number.isFinite(target)) {
      throw new OutOfRangeError(isH ? 'enthalpy h' : 'entropy s', target, '', -Infinity, Infinity, this.name);
    }
    const lnP = Math.log(p / P0);
    let T: number;
    if (TGuess === undefined) {
      T = this.guess(target, isH, lnP);
    } else {
      if (!(TGuess >= this.Tmin && TGuess <= this.Tmax)) {
        throw new OutOfRangeError(
          'starting temperature TGuess',
          TGuess,
          'K',
          this.Tmin,
          this.Tmax,
          this.name,
        );
      }
      T = TGuess;
    }
    const w = this.w;
    let lo = this.Tmin;
    let hi = this.Tmax;
    // Whether h or s at lo (hi) is known to lie at or below (at or above) the target.
    let loKnown = false;
    let hiKnown = false;
    let residual = Number.NaN;
    for (let it = 0; it < MAX_ITERATIONS; it++) {
      this.props(p, T, lnP, true);
      residual = (isH ? w[H]! : w[S]!) - target;
      if (residual > 0) {
        hi = T;
        hiKnown = true;
      } else {
        lo = T;
        loKnown = true;
      }
      // For s: ln(T_next) = ln T - residual/cp, written as a step in T.
      const step = isH ? residual / w[CP]! : T * -Math.expm1(-residual / w[CP]!);
      // Converged, unless the last step crosses the 1000 K seam of the NASA fits: h and s step
      // slightly there, so the linear step is not valid across it; one more evaluation settles it.
      const sameSide = T < T_MID === T - step < T_MID;
      if (Math.abs(step) <= STEP_TOL * T && sameSide) {
        return this.finish(p, lnP, T, step, isH, target);
      }
      let next = T - step;
      if (!(next > lo && next < hi) || it >= NEWTON_ITERATIONS) {
        if (!loKnown) loKnown = this.checkEnd(p, lnP, target, isH, this.Tmin);
        if (!hiKnown) hiKnown = this.checkEnd(p, lnP, target, isH, this.Tmax);
        next = 0.5 * (lo + hi);
        if (hi - lo <= BRACKET_TOL * hi) return this.stepState(p, lnP, target, isH, lo, hi);
      }
      T = next;
    }
    throw new ConvergenceError(`${this.name}: T from (p, ${isH ? 'h' : 's'})`, MAX_ITERATIONS, residual);
  }

  /**
   * The converged state: T - step, with the quantity solved for set to its target (the last
   * Newton step lands on it), the other one moved along the isobar by the linear step (dh = cp dT,
   * ds = cp/T dT) and v by (dv/dT)_p; the error of that is of order step^2. A step
   * that would end beyond Tmin or Tmax means the solution lies at that end within the tolerance,
   * or beyond it: the end is evaluated, and its state returned only if it still brackets the target.
   */
  private finish(p: number, lnP: number, T: number, step: number, isH: boolean, target: number): FluidState {
    const w = this.w;
    const Tn = T - step;
    if (!(Tn >= this.Tmin && Tn <= this.Tmax)) {
      const end = Tn < this.Tmin ? this.Tmin : this.Tmax;
      this.checkEnd(p, lnP, target, isH, end);
      return this.stateFromScratch(p, end);
    }
    const cp = w[CP]!;
    return {
      p,
      T: Tn,
      h: isH ? target : w[H]! - cp * step,
      s: isH ? w[S]! - (cp / T) * step : target,
      v: w[V]! - w[DVDT]! * step,
    };
  }

  /**
   * The bracket [lo, hi] has shrunk to nothing without Newton converging: h or s steps across the
   * target there. The NASA ranges meet at 1000 K with a step of up to 0.05 K in H/R and 1e-4 in
   * S0/R (the limits nasa7.test.ts checks), so a mismatch within STEP_MISMATCH of those is the fit's
   * seam and the state at the step is the answer; a larger step (the Peng-Robinson vapour root
   * ending) is refused with GasStateUndeterminedError.
   */
  private stepState(
    p: number,
    lnP: number,
    target: number,
    isH: boolean,
    lo: number,
    hi: number,
  ): FluidState {
    const w = this.w;
    const T = 0.5 * (lo + hi);
    this.props(p, T, lnP, true);
    const f = isH ? w[H]! : w[S]!;
    const allowed = isH ? STEP_MISMATCH * this.R * T : STEP_MISMATCH * this.R;
    if (Math.abs(f - target) <= allowed) return this.stateFromScratch(p, T);
    this.props(p, lo, lnP, true);
    const below = isH ? w[H]! : w[S]!;
    this.props(p, hi, lnP, true);
    const above = isH ? w[H]! : w[S]!;
    throw new GasStateUndeterminedError(
      isH ? 'enthalpy h' : 'entropy s',
      target,
      isH ? 'J/kg' : 'J/(kg K)',
      p,
      T,
      below,
      above,
      this.name,
    );
  }

  /**
   * Evaluates h or s at the end Tend (Tmin or Tmax) of the range and refuses a target beyond it
   * with both limits; returns true (the end brackets the solution).
   */
  private checkEnd(p: number, lnP: number, target: number, isH: boolean, Tend: number): boolean {
    this.props(p, Tend, lnP, true);
    const f = isH ? this.w[H]! : this.w[S]!;
    const beyond = Tend === this.Tmin ? f > target : f < target;
    if (beyond) {
      this.props(p, this.Tmin, lnP, true);
      const fMin = isH ? this.w[H]! : this.w[S]!;
      this.props(p, this.Tmax, lnP, true);
      const fMax = isH ? this.w[H]! : this.w[S]!;
      throw new OutOfRangeError(
        isH ? 'enthalpy h' : 'entropy s',
        target,
        isH ? 'J/kg' : 'J/(kg K)',
        fMin,
        fMax,
        `${this.name} at p = ${p} Pa`,
      );
    }
    return true;
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
