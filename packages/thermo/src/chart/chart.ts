import { BadInputError } from '../errors.js';
import type { Fluid, FluidState } from '../fluid.js';
import type { MachineResult } from '../machines/types.js';

/** A point of the h-s (Mollier) chart. */
export interface HsPoint {
  /** Specific entropy [J/(kg K)]. */
  readonly s: number;
  /** Specific enthalpy [J/kg]. */
  readonly h: number;
  /** Temperature [K] at the point (the local slope of its isobar); NaN on a straight drawn line. */
  readonly T: number;
}

export interface Isobar {
  /** Pressure [Pa]. */
  readonly p: number;
  readonly points: readonly HsPoint[];
}

export interface SaturationDome {
  /** Saturated liquid line, low to high pressure. */
  readonly liquid: readonly HsPoint[];
  /** Saturated vapour line, low to high pressure. */
  readonly vapour: readonly HsPoint[];
}

/** Saturated liquid and vapour at a pressure [Pa], for fluids with a dome (water). */
export type SaturationLine = (p: number) => { readonly liquid: FluidState; readonly vapour: FluidState };

export interface HsChartOptions {
  /** Points per isobar (default 41). */
  readonly isobarPoints?: number;
  /** Share of the process entropy span added on each side of the isobars (default 0.25). */
  readonly margin?: number;
  /** Expansion or compression line: a polytropic path (constant small-stage efficiency) or a straight line (default 'polytropic'). */
  readonly path?: 'polytropic' | 'straight';
  /** Points on the process path (default 21). */
  readonly pathPoints?: number;
  /** Saturation line for the dome; the dome is drawn when given (hsChart for water passes IF97's). */
  readonly saturation?: SaturationLine | undefined;
  /** Pressures [Pa] of the dome points (default: 60 points log-spaced from 1 kPa to 22 MPa). */
  readonly domePressures?: readonly number[];
}

export interface HsChart {
  readonly inletIsobar: Isobar;
  readonly outletIsobar: Isobar;
  readonly dome?: SaturationDome | undefined;
  readonly inlet: HsPoint;
  readonly outletIsentropic: HsPoint;
  /** Real outlet; undefined when the outlet state is undetermined. */
  readonly outlet?: HsPoint | undefined;
  /** Inlet to ideal outlet (a vertical line: constant entropy). */
  readonly isentropicPath: readonly HsPoint[];
  /** Inlet to real outlet; empty when the outlet is undetermined. */
  readonly actualPath: readonly HsPoint[];
  readonly pathKind: 'polytropic' | 'straight';
  /** Small-stage efficiency of the polytropic path (fraction), when it was drawn. */
  readonly pathEfficiency?: number | undefined;
  /** s_out - s_in [J/(kg K)]. */
  readonly entropyGeneration?: number | undefined;
}

const point = (st: FluidState): HsPoint => ({ s: st.s, h: st.h, T: st.T });

function count(name: string, value: number | undefined, fallback: number): number {
  const n = value ?? fallback;
  if (!Number.isInteger(n) || n < 2)
    throw new BadInputError(`options.${name}`, `must be an integer >= 2, got ${n}`);
  return n;
}

/** Points of an isobar; those outside the property model's range are left out (the chart ends there). */
function isobar(fluid: Fluid, p: number, sMin: number, sMax: number, n: number): Isobar {
  const points: HsPoint[] = [];
  for (let i = 0; i < n; i++) {
    const s = sMin + ((sMax - sMin) * i) / (n - 1);
    try {
      points.push(point(fluid.statePS(p, s)));
    } catch {
      // outside the formulation's range: no point
    }
  }
  return { p, points };
}

/**
 * Path of constant small-stage (polytropic) efficiency eta from the inlet to the outlet pressure:
 * each step takes dh = dh_s / eta (compression) or dh = eta dh_s (expansion) at the local entropy.
 */
function polytropicPath(
  fluid: Fluid,
  inlet: FluidState,
  pOut: number,
  eta: number,
  n: number,
  expansion: boolean,
): FluidState[] {
  const states: FluidState[] = [inlet];
  let st = inlet;
  const ratio = pOut / inlet.p;
  for (let i = 1; i < n; i++) {
    const p = inlet.p * ratio ** (i / (n - 1));
    const hs = fluid.statePS(p, st.s).h;
    const h = expansion ? st.h - eta * (st.h - hs) : st.h + (hs - st.h) / eta;
    st = fluid.statePH(p, h);
    states.push(st);
  }
  return states;
}

/** The small-stage efficiency whose path ends at the real outlet, by bisection (capped; undefined if none in (0, 1]). */
function fitPolytropic(
  fluid: Fluid,
  r: MachineResult,
  n: number,
): { eta: number; states: FluidState[] } | undefined {
  const expansion = r.kind === 'turbine';
  const endH = (eta: number): number =>
    polytropicPath(fluid, r.inlet, r.outlet.p, eta, n, expansion).at(-1)!.h;
  let lo = 0.05;
  let hi = 1;
  // Expansion: end enthalpy falls as eta rises; compression: it falls too (less work to add).
  const fLo = endH(lo) - r.outlet.h;
  const fHi = endH(hi) - r.outlet.h;
  if (fLo * fHi > 0) return undefined;
  for (let i = 0; i < 60 && hi - lo > 1e-10; i++) {
    const mid = 0.5 * (lo + hi);
    const f = endH(mid) - r.outlet.h;
    if (f * fLo > 0) lo = mid;
    else hi = mid;
  }
  const eta = 0.5 * (lo + hi);
  return { eta, states: polytropicPath(fluid, r.inlet, r.outlet.p, eta, n, expansion) };
}

function defaultDomePressures(): number[] {
  const n = 60;
  const lo = 1e3;
  const hi = 22.0e6; // just below the critical pressure 22.064 MPa (IAPWS R7-97)
  return Array.from({ length: n }, (_, i) => lo * (hi / lo) ** (i / (n - 1)));
}

/**
 * Geometry of a machine's process on the h-s chart, as plain arrays for a plotting library:
 * the inlet and outlet isobars over the process's entropy range, the saturation dome when a
 * saturation line is given, the three state points and the isentropic and real paths.
 */
export function hsChartGeometry(result: MachineResult, fluid: Fluid, options: HsChartOptions = {}): HsChart {
  const nIsobar = count('isobarPoints', options.isobarPoints, 41);
  const nPath = count('pathPoints', options.pathPoints, 21);
  const margin = options.margin ?? 0.25;
  if (!(margin >= 0)) throw new BadInputError('options.margin', `must be >= 0, got ${margin}`);
  const determined = Number.isFinite(result.outlet.h) && Number.isFinite(result.outlet.s);
  const sIn = result.inlet.s;
  const sOut = determined ? result.outlet.s : sIn;
  // A floor on the span keeps an (almost) isentropic process from drawing zero-length isobars.
  const span = Math.max(Math.abs(sOut - sIn), 0.02 * Math.max(Math.abs(sIn), 1000));
  const sMin = Math.min(sIn, sOut) - margin * span;
  const sMax = Math.max(sIn, sOut) + margin * span;

  let dome: SaturationDome | undefined;
  if (options.saturation !== undefined) {
    const liquid: HsPoint[] = [];
    const vapour: HsPoint[] = [];
    for (const p of options.domePressures ?? defaultDomePressures()) {
      const sat = options.saturation(p);
      liquid.push(point(sat.liquid));
      vapour.push(point(sat.vapour));
    }
    dome = { liquid, vapour };
  }

  const inlet = point(result.inlet);
  const outletIsentropic = point(result.outletIsentropic);
  const isentropicPath: HsPoint[] = [];
  for (let i = 0; i < nPath; i++) {
    const p = result.inlet.p * (result.outletIsentropic.p / result.inlet.p) ** (i / (nPath - 1));
    isentropicPath.push(i === 0 ? inlet : point(fluid.statePS(p, sIn)));
  }

  let actualPath: HsPoint[] = [];
  let pathKind: 'polytropic' | 'straight' = options.path ?? 'polytropic';
  let pathEfficiency: number | undefined;
  if (determined) {
    const fit = pathKind === 'polytropic' ? fitPolytropic(fluid, result, nPath) : undefined;
    if (fit !== undefined) {
      actualPath = fit.states.map(point);
      pathEfficiency = fit.eta;
    } else {
      // Straight line: asked for, or no small-stage efficiency in (0, 1] reaches the outlet (an instrument fault).
      pathKind = 'straight';
      const out = point(result.outlet);
      actualPath = Array.from({ length: nPath }, (_, i) => {
        const t = i / (nPath - 1);
        return { s: inlet.s + t * (out.s - inlet.s), h: inlet.h + t * (out.h - inlet.h), T: Number.NaN };
      });
    }
  }

  return {
    inletIsobar: isobar(fluid, result.inlet.p, sMin, sMax, nIsobar),
    outletIsobar: isobar(fluid, result.outlet.p, sMin, sMax, nIsobar),
    dome,
    inlet,
    outletIsentropic,
    outlet: determined ? point(result.outlet) : undefined,
    isentropicPath,
    actualPath,
    pathKind,
    pathEfficiency,
    entropyGeneration: result.entropyGeneration,
  };
}
