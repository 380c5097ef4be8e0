import { describe, expect, it } from 'vitest';
import { OutOfRangeError } from '../errors.js';
import { dryAir, naturalGas } from './air.js';
import { GasStateUndeterminedError } from './errors.js';
import { type GasModel, pengRobinsonMixture } from './mixture.js';
import { PengRobinsonMixture, PR_OMEGA_A, R_MOLAR } from './peng-robinson.js';
import { SPECIES } from './species.js';

const rel = (a: number, b: number) => Math.abs(a - b) / Math.abs(b);

/** An invented pipeline gas for the tests (demo composition, not a measured analysis). */
const PIPELINE_GAS = {
  methane: 0.9,
  ethane: 0.05,
  propane: 0.02,
  nC4: 0.005,
  iC4: 0.005,
  N2: 0.01,
  CO2: 0.01,
};

const air = dryAir();
const ng = naturalGas(PIPELINE_GAS, 'peng-robinson');

/** Temperatures [K] of the grid: the lower limit and just above it, the 1000 K seam of the NASA fits, hot. */
const T_GRID = [200, 200.001, 201, 205, 230, 260, 300, 350, 450, 650, 999.999, 1000.001, 1400, 2500];
/** Pressures [Pa] of the grid, from below atmospheric to pipeline and reinjection pressures. */
const P_GRID = [2e4, 1e5, 1e6, 3e6, 7e6, 15e6, 30e6];

/**
 * statePH and statePS invert statePT: T back within 1e-7 K, and the returned state is the
 * statePT state at the returned T (common practice, no source).
 */
function roundTrips(gas: GasModel, Ts: readonly number[], ps: readonly number[]): void {
  for (const p of ps) {
    for (const T of Ts) {
      const st = gas.statePT(p, T);
      for (const back of [gas.statePH(p, st.h), gas.statePS(p, st.s)]) {
        expect(Math.abs(back.T - T), `${gas.name} at ${p} Pa, ${T} K`).toBeLessThan(1e-7);
        const again = gas.statePT(p, back.T);
        expect(Math.abs(back.h - again.h)).toBeLessThan(1e-9 * (Math.abs(again.h) + gas.R * T));
        expect(Math.abs(back.s - again.s)).toBeLessThan(1e-12 * Math.abs(again.s) + 1e-9);
        expect(rel(back.v, again.v)).toBeLessThan(1e-12);
      }
    }
  }
}

describe('statePH and statePS round trips over a grid of p and T (common practice, no source)', () => {
  it('dry air, ideal gas: 7 pressures x 15 temperatures from 200 K to 2500 K', () => {
    roundTrips(air, T_GRID, P_GRID);
  });
  it('pipeline gas, Peng-Robinson: 7 pressures x 15 temperatures, dense states at 200 K included', () => {
    roundTrips(ng, T_GRID, P_GRID);
  });
  it('pipeline gas, Peng-Robinson: a fine sweep from 200 K to 320 K at 7 MPa, where cp peaks', () => {
    const Ts = Array.from({ length: 121 }, (_, k) => 200 + k);
    roundTrips(ng, Ts, [7e6]);
  });
  it('at exactly 1000 K, where the NASA ranges meet with a small step, the answer is a solution within 1e-4 K', () => {
    // The two fits join to within 0.05 K in H/R and 1e-4 in S0/R (nasa7.test.ts); where h dips
    // across the seam, more than one T within (0.05 R)/cp of 1000 K gives the same h.
    for (const gas of [air, ng]) {
      for (const p of P_GRID) {
        const st = gas.statePT(p, 1000);
        for (const back of [gas.statePH(p, st.h), gas.statePS(p, st.s)]) {
          expect(Math.abs(back.T - 1000)).toBeLessThan(1e-4);
          const again = gas.statePT(p, back.T);
          expect(Math.abs(again.h - st.h)).toBeLessThan(0.1 * gas.R);
          expect(Math.abs(again.s - st.s)).toBeLessThan(2e-4 * gas.R);
        }
      }
    }
  });
  it('statePS returns the entropy asked for and statePH the enthalpy asked for, exactly', () => {
    const st = ng.statePT(5e6, 333.3);
    expect(ng.statePS(5e6, st.s).s).toBe(st.s);
    expect(ng.statePH(5e6, st.h).h).toBe(st.h);
  });
});

describe('starting temperature and the bracketed fallback', () => {
  it('a far-off TGuess (either end of the range, or just below the 1000 K seam) still converges to the same state', () => {
    for (const [gas, p, T] of [
      [ng, 7e6, 300],
      [ng, 3e6, 1400],
      [air, 1e5, 2500],
      [air, 5e6, 205],
    ] as const) {
      const st = gas.statePT(p, T);
      for (const guess of [gas.Tmin, 999.99, gas.Tmax]) {
        expect(Math.abs(gas.statePH(p, st.h, guess).T - T)).toBeLessThan(1e-7);
        expect(Math.abs(gas.statePS(p, st.s, guess).T - T)).toBeLessThan(1e-7);
      }
    }
  });

  it('a target inside the step where the Peng-Robinson vapour root ends (propane, 3 MPa, ~342 K) is GasStateUndeterminedError, not a temperature', () => {
    // In Peng-Robinson, propane at 3 MPa changes from the liquid-like to the vapour-like root near
    // 342 K (the model's own boiling point; the test needs no measured one): h jumps there by about
    // 180 kJ/kg, so an enthalpy halfway has no single-phase state.
    const c3 = pengRobinsonMixture({ propane: 1 });
    const liquid = c3.statePT(3e6, 330);
    const vapour = c3.statePT(3e6, 360);
    const h = 0.5 * (liquid.h + vapour.h);
    try {
      c3.statePH(3e6, h);
      expect.unreachable();
    } catch (e) {
      expect(e).toBeInstanceOf(GasStateUndeterminedError);
      const err = e as GasStateUndeterminedError;
      expect(err.code).toBe('THERMO_STATE_UNDETERMINED');
      expect(err.T).toBeGreaterThan(330);
      expect(err.T).toBeLessThan(360);
      expect(err.below).toBeLessThan(h);
      expect(err.above).toBeGreaterThan(h);
      expect(err.above - err.below).toBeGreaterThan(50_000); // [J/kg]
    }
    expect(() => c3.statePS(3e6, 0.5 * (liquid.s + vapour.s))).toThrow(GasStateUndeterminedError);
    // Either side of the step the inversion works, whatever the start.
    for (const guess of [200, 345, 600]) {
      expect(Math.abs(c3.statePH(3e6, vapour.h, guess).T - 360)).toBeLessThan(1e-7);
      expect(Math.abs(c3.statePS(3e6, liquid.s, guess).T - 330)).toBeLessThan(1e-7);
    }
  });

  it('targets beyond the range are refused with both limits, from any start (not clamped)', () => {
    const p = 2e6;
    const lo = ng.statePT(p, ng.Tmin);
    const hi = ng.statePT(p, ng.Tmax);
    for (const guess of [undefined, ng.Tmin, 500, ng.Tmax]) {
      for (const [call, value] of [
        [() => ng.statePS(p, lo.s - 1e-6, guess), lo.s - 1e-6],
        [() => ng.statePH(p, hi.h + 1, guess), hi.h + 1],
      ] as const) {
        try {
          call();
          expect.unreachable();
        } catch (e) {
          expect(e).toBeInstanceOf(OutOfRangeError);
          const err = e as OutOfRangeError;
          expect(err.value).toBe(value);
          expect(err.min === lo.s || err.min === lo.h).toBe(true);
          expect(err.max === hi.s || err.max === hi.h).toBe(true);
        }
      }
    }
  });

  it('a TGuess outside the range, a NaN target or a bad pressure is refused', () => {
    expect(() => air.statePS(1e5, 7000, 100)).toThrow(OutOfRangeError);
    expect(() => air.statePS(1e5, Number.NaN)).toThrow(OutOfRangeError);
    expect(() => air.statePH(0, 1000)).toThrow(OutOfRangeError);
    expect(() => air.statePH(Number.NaN, 1000)).toThrow(OutOfRangeError);
  });
});

describe('Peng-Robinson a(T) precomputed as A0 - 2 A1 sqrt(T) + A2 T (algebraic identity of the mixing rule)', () => {
  const ids = ['CH4', 'C2H6', 'CO2', 'N2', 'H2S'] as const;
  const x = [0.8, 0.08, 0.05, 0.04, 0.03];
  const sp = ids.map((id) => SPECIES[id]);
  const k = (a: string, b: string) =>
    (a === 'CH4' && b === 'CO2') || (a === 'CO2' && b === 'CH4') ? 0.09 : 0;
  const pr = new PengRobinsonMixture(sp, x, (a, b) => k(a.id, b.id));
  const kappa = (s: (typeof sp)[number]) => 0.37464 + 1.54226 * s.omega - 0.26992 * s.omega * s.omega;
  /**
   * The mixing rule a = sum x_i x_j (1 - k_ij) a_ij, a_ij = sqrt(a_i a_j) as printed, or
   * q_i q_j with q_i = sqrt(ac_i) [1 + kappa_i (1 - sqrt(T/Tc_i))] keeping its sign.
   */
  const direct = (T: number, signed: boolean) => {
    const q = sp.map((s) => {
      const qi =
        Math.sqrt((PR_OMEGA_A * R_MOLAR * R_MOLAR * s.Tc * s.Tc) / s.Pc) *
        (1 + kappa(s) * (1 - Math.sqrt(T / s.Tc)));
      return signed ? qi : Math.sqrt(qi * qi);
    });
    let a = 0;
    for (let i = 0; i < sp.length; i++) {
      for (let j = 0; j < sp.length; j++) a += x[i]! * x[j]! * (1 - k(ids[i]!, ids[j]!)) * q[i]! * q[j]!;
    }
    return a;
  };
  const out = new Float64Array(3);

  it('equals the printed rule with sqrt(a_i a_j) (Peng and Robinson 1976, eqs. 9-18) up to where the N2 alpha reaches zero, Tc (1 + 1/kappa)^2 = 1390 K', () => {
    const n2 = SPECIES.N2;
    expect(n2.Tc * (1 + 1 / kappa(n2)) ** 2).toBeCloseTo(1389.6, 0);
    for (const T of [200, 288.15, 450, 1000, 1380]) {
      pr.attraction(T, out);
      expect(rel(out[0]!, direct(T, false))).toBeLessThan(1e-12);
    }
  });

  it('equals the signed continuation at all T, and its derivatives match finite differences', () => {
    for (const T of [200, 450, 1000, 1380, 1395, 2000, 3000, 5000]) {
      pr.attraction(T, out);
      const [a, da, d2a] = out;
      expect(rel(a!, direct(T, true))).toBeLessThan(1e-12);
      const d = 1e-3 * T;
      const dFd = (direct(T + d, true) - direct(T - d, true)) / (2 * d);
      const d2Fd = (direct(T + d, true) - 2 * direct(T, true) + direct(T - d, true)) / (d * d);
      expect(rel(da!, dFd)).toBeLessThan(1e-5);
      expect(rel(d2a!, d2Fd)).toBeLessThan(1e-3);
    }
  });

  it('so h and s stay continuous there: round trips of a hydrogen-rich gas at 30 MPa across 1389.6 K (common practice, no source)', () => {
    const gas = pengRobinsonMixture({ H2: 0.7, CO: 0.2, CO2: 0.05, N2: 0.05 });
    roundTrips(gas, [1385, 1389, 1389.6, 1389.7, 1390, 1395], [1e6, 30e6]);
  });
});
