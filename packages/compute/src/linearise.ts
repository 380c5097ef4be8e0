/**
 * GUM first-order propagation with the sensitivity coefficients evaluated once per operating
 * point rather than once per grid point.
 *
 * GUM (JCGM 100:2008) eq. 10 gives u_c^2(y) = sum_i c_i^2 u^2(x_i) with c_i = df/dx_i "evaluated at
 * the expectations X_i = x_i" (5.1.3); 5.1.2 builds the whole first-order law on a Taylor expansion
 * about those estimates. Here the partial derivatives are evaluated at a nearby linearisation point
 * x0 (the median operating point of the segment's lookback, or a point of the segment itself) and
 * reused for every grid point whose inputs lie within a relative distance `tolerance` of x0 in every
 * input; each point keeps its own u(x_i) (a percent-of-reading uncertainty follows the reading).
 * The approximation is that c_i(x) ~ c_i(x0) over that neighbourhood: the error in u_c is of the
 * order of the relative change of the derivatives, checked against the per-point propagation in
 * linearise.test.ts. Points farther away start a new linearisation point.
 *
 * The derivatives are central differences with the step equal to u(x0_i), as the per-point GUM
 * of @isentrope/thermo takes them (GUM 5.1.3 note 2), falling back to a one-sided difference when
 * the model fails on one side (a range limit).
 */
import {
  COVERAGE_FACTOR,
  DEFAULT_ENTROPY_TOLERANCE,
  evaluateMachine,
  INSTRUMENT_FAULT_FLAGS,
  type MachineFlag,
  type MachineInput,
  type MachineResult,
} from '@isentrope/thermo';

/** Input slots of the per-point vectors, in this order. */
export const IN_P_IN = 0;
export const IN_T_IN = 1;
export const IN_P_OUT = 2;
export const IN_T_OUT = 3;
export const IN_MASS_FLOW = 4;
export const IN_VOLUME_FLOW = 5;
export const IN_SHAFT_POWER = 6;
export const IN_ELECTRICAL_POWER = 7;
export const N_INPUTS = 8;

/** Output slots whose uncertainty is propagated. */
export const OUT_ETA = 0;
export const OUT_ETA_POLY = 1;
export const OUT_WORK = 2;
export const OUT_POWER = 3;
export const OUT_SGEN = 4;
export const OUT_ETA_HYDRAULIC = 5;
export const OUT_ETA_FAN = 6;
export const N_OUTPUTS = 7;

/** The constant part of a machine's input (fluid, kind, driver efficiency). */
export interface ModelTemplate {
  readonly kind: MachineInput['kind'];
  readonly fluid: MachineInput['fluid'];
  /** Driver efficiency [-], used only when the point carries an electrical power. */
  readonly driverEfficiency: number | undefined;
}

/** The machine input of an input vector x (slots above; NaN = absent). */
export function machineInput(t: ModelTemplate, x: ArrayLike<number>, o = 0): MachineInput {
  const electricalPower = present(x[o + IN_ELECTRICAL_POWER] as number);
  const driverEfficiency = electricalPower !== undefined ? t.driverEfficiency : undefined;
  return {
    kind: t.kind,
    fluid: t.fluid,
    inlet: { p: x[o + IN_P_IN] as number, T: x[o + IN_T_IN] as number },
    outlet: { p: x[o + IN_P_OUT] as number, T: x[o + IN_T_OUT] as number },
    massFlow: present(x[o + IN_MASS_FLOW] as number),
    volumeFlow: present(x[o + IN_VOLUME_FLOW] as number),
    shaftPower: present(x[o + IN_SHAFT_POWER] as number),
    electricalPower: driverEfficiency !== undefined ? electricalPower : undefined,
    driverEfficiency,
  };
}

/** An input slot's value, or undefined for an absent one (NaN). */
function present(v: number): number | undefined {
  return Number.isNaN(v) ? undefined : v;
}

/** The figures a result (or their uncertainties) holds per OUT_* slot. */
export type OutputFigures = Partial<
  Pick<
    MachineResult,
    | 'isentropicEfficiency'
    | 'polytropicEfficiency'
    | 'specificWork'
    | 'power'
    | 'entropyGeneration'
    | 'hydraulicEfficiency'
    | 'fanEfficiency'
  >
>;

/** The outputs of a result, or their uncertainties, in OUT_* order (NaN when absent). */
export function outputsOf(r: OutputFigures, out: Float64Array): Float64Array {
  out[OUT_ETA] = r.isentropicEfficiency ?? Number.NaN;
  out[OUT_ETA_POLY] = r.polytropicEfficiency ?? Number.NaN;
  out[OUT_WORK] = r.specificWork ?? Number.NaN;
  out[OUT_POWER] = r.power ?? Number.NaN;
  out[OUT_SGEN] = r.entropyGeneration ?? Number.NaN;
  out[OUT_ETA_HYDRAULIC] = r.hydraulicEfficiency ?? Number.NaN;
  out[OUT_ETA_FAN] = r.fanEfficiency ?? Number.NaN;
  return out;
}

/** Sensitivity coefficients at one linearisation point. */
export interface Linearisation {
  /** The linearisation point x0 [SI, slots above]. */
  readonly x0: Float64Array;
  /** Which slots are present (bit k = slot k). */
  readonly mask: number;
  /**
   * dy_j/dx_k at x0 [output unit / input unit], row-major N_OUTPUTS x N_INPUTS; NaN when unknown;
   * undefined when the model fails at x0 itself (the points then take the per-point GUM).
   */
  readonly c: Float64Array | undefined;
}

/** Presence mask of an input vector. */
export function maskOf(x: ArrayLike<number>, o = 0): number {
  let m = 0;
  for (let k = 0; k < N_INPUTS; k++) if (!Number.isNaN(x[o + k] as number)) m |= 1 << k;
  return m;
}

/**
 * Sensitivities at x0 by central differences with steps u0 (GUM 5.1.3 note 2); a slot with u0 = 0
 * takes a relative step of 1e-6 so a point with its own u > 0 still gets a derivative.
 */
export function linearise(t: ModelTemplate, x0: Float64Array, u0: Float64Array): Linearisation {
  const mask = maskOf(x0);
  const base = new Float64Array(N_OUTPUTS);
  try {
    outputsOf(evaluateMachine(machineInput(t, x0)), base);
  } catch {
    return { x0, mask, c: undefined };
  }
  const c = new Float64Array(N_OUTPUTS * N_INPUTS);
  const x = Float64Array.from(x0);
  const plus = new Float64Array(N_OUTPUTS);
  const minus = new Float64Array(N_OUTPUTS);
  for (let k = 0; k < N_INPUTS; k++) {
    if ((mask & (1 << k)) === 0) continue;
    const xk = x0[k] as number;
    const uk = u0[k] as number;
    const h = uk > 0 && Number.isFinite(uk) ? uk : 1e-6 * Math.max(Math.abs(xk), 1);
    let okPlus = true;
    let okMinus = true;
    x[k] = xk + h;
    try {
      outputsOf(evaluateMachine(machineInput(t, x)), plus);
    } catch {
      okPlus = false;
    }
    x[k] = xk - h;
    try {
      outputsOf(evaluateMachine(machineInput(t, x)), minus);
    } catch {
      okMinus = false;
    }
    x[k] = xk;
    for (let j = 0; j < N_OUTPUTS; j++) {
      const hi = okPlus ? (plus[j] as number) : (base[j] as number);
      const lo = okMinus ? (minus[j] as number) : (base[j] as number);
      const span = okPlus && okMinus ? 2 * h : okPlus || okMinus ? h : Number.NaN;
      c[j * N_INPUTS + k] = (hi - lo) / span;
    }
  }
  return { x0, mask, c };
}

/**
 * u_c of each output from the sensitivities and the point's own standard uncertainties u (at
 * offset o), GUM eq. 10 with uncorrelated inputs. NaN where a needed derivative is unknown.
 */
export function combine(lin: Linearisation, u: ArrayLike<number>, o: number, out: Float64Array): void {
  const c = lin.c as Float64Array;
  for (let j = 0; j < N_OUTPUTS; j++) {
    let s = 0;
    for (let k = 0; k < N_INPUTS; k++) {
      const uk = u[o + k] as number;
      if (!(uk > 0)) continue;
      const d = (c[j * N_INPUTS + k] as number) * uk;
      s += d * d;
    }
    out[j] = Math.sqrt(s);
  }
}

/**
 * The result's instrument-fault flags decided against the uncertainty, as the per-point GUM of
 * @isentrope/thermo decides them (evaluateMachineWithUncertainty): a second-law violation only when
 * s_out - s_in < -max(tolerance, k u) and an efficiency above one only when eta - 1 > k u, k = 2
 * (about 95 %, GUM 6.2-6.3); otherwise the reading lies inside the instruments' own uncertainty.
 */
export function reflag(r: MachineResult, u: Float64Array): MachineResult {
  // Nothing to decide (the usual point): the result stands as it is, with no copy made.
  if (
    !r.flags.some(
      (f) =>
        f === 'second-law-violation' || f === 'efficiency-above-one' || f === 'outlet-colder-than-isentropic',
    ) &&
    !((r.entropyGeneration ?? 0) < -DEFAULT_ENTROPY_TOLERANCE) &&
    !((r.isentropicEfficiency ?? 0) > 1 + 1e-9) &&
    !((r.hydraulicEfficiency ?? 0) > 1 + 1e-9) &&
    !((r.fanEfficiency ?? 0) > 1 + 1e-9)
  )
    return r;
  const flags: MachineFlag[] = r.flags.filter(
    (f) =>
      f !== 'second-law-violation' && f !== 'efficiency-above-one' && f !== 'outlet-colder-than-isentropic',
  );
  const sgen = r.entropyGeneration;
  const uS = Number.isFinite(u[OUT_SGEN] as number) ? (u[OUT_SGEN] as number) : 0;
  if (sgen !== undefined && sgen < -Math.max(DEFAULT_ENTROPY_TOLERANCE, COVERAGE_FACTOR * uS)) {
    flags.push('second-law-violation');
    if (r.flags.includes('outlet-colder-than-isentropic')) flags.push('outlet-colder-than-isentropic');
  }
  const above = (
    [
      [r.isentropicEfficiency, OUT_ETA],
      [r.hydraulicEfficiency, OUT_ETA_HYDRAULIC],
      [r.fanEfficiency, OUT_ETA_FAN],
    ] as const
  ).some(([eta, j]) => {
    const uj = Number.isFinite(u[j] as number) ? (u[j] as number) : 0;
    return eta !== undefined && eta - 1 > Math.max(1e-9, COVERAGE_FACTOR * uj);
  });
  if (above) flags.push('efficiency-above-one');
  const valid = !flags.some(
    (f) => INSTRUMENT_FAULT_FLAGS.has(f) || f === 'outlet-undetermined' || f === 'inlet-undetermined',
  );
  return { ...r, flags, valid };
}
