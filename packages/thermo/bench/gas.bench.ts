/**
 * Gas property speed on one core: statePT, statePH and statePS per second for dry air (ideal gas)
 * and a natural gas on Peng-Robinson, plus a compressor-like case (inlet statePT, isentropic
 * outlet statePS, actual outlet statePT, isentropic efficiency) per second. Rates are per
 * CPU-second of this process (the machine is shared). One JSON line per figure.
 * Run: npx tsx packages/thermo/bench/gas.bench.ts
 */
import { dryAir, type GasModel, naturalGas } from '../src/gas/index.js';
import { emit, rate } from './harness.js';

/**
 * Inputs spread over 97 pressures x 101 temperatures (or entropies/enthalpies) around p0 and
 * T0 so that no answer is cached by accident; statePH and statePS targets are taken from states
 * of the same grid.
 */
function run(tag: string, gas: GasModel, p0: number, T0: number): void {
  const p = (i: number) => p0 * (1 + (i % 97) * 1e-3);
  const T = (i: number) => T0 + (i % 101);
  const h = Float64Array.from({ length: 101 }, (_, k) => gas.statePT(p0, T0 + k).h);
  const s = Float64Array.from({ length: 101 }, (_, k) => gas.statePT(p0, T0 + k).s);
  emit(
    `thermo.gas.${tag}.statePT`,
    rate((i) => gas.statePT(p(i), T(i)).h),
    'evals/s',
  );
  emit(
    `thermo.gas.${tag}.statePH`,
    rate((i) => gas.statePH(p(i), h[i % 101]!).T),
    'evals/s',
  );
  emit(
    `thermo.gas.${tag}.statePS`,
    rate((i) => gas.statePS(p(i), s[i % 101]!).T),
    'evals/s',
  );
}

/**
 * A compressor case as the machine model computes it (DESIGN.md section 5): inlet state from
 * (p1, T1), isentropic outlet from (p2, s1), actual outlet from (p2, T2), efficiency
 * (h2s - h1)/(h2 - h1). Invented operating points: p1 around p1 [Pa], pressure ratio about 2.
 */
function compressor(tag: string, gas: GasModel, p1: number, T1: number, T2: number): void {
  emit(
    `thermo.gas.${tag}.compressor_case`,
    rate((i) => {
      const pin = p1 * (1 + (i % 97) * 1e-3);
      const inlet = gas.statePT(pin, T1 + (i % 23) * 0.5);
      const pout = 2 * pin * (1 + (i % 13) * 1e-3);
      const outS = gas.statePS(pout, inlet.s);
      const outlet = gas.statePT(pout, T2 + (i % 29) * 0.5);
      return (outS.h - inlet.h) / (outlet.h - inlet.h);
    }),
    'cases/s',
  );
}

const air = dryAir();
const gas = naturalGas(
  { methane: 0.9, ethane: 0.05, propane: 0.02, nC4: 0.005, iC4: 0.005, N2: 0.01, CO2: 0.01 },
  'peng-robinson',
);
run('air_ideal', air, 1e5, 300);
run('natural_gas_pr', gas, 7e6, 300);
compressor('air_ideal', air, 1e5, 293, 380);
compressor('natural_gas_pr', gas, 4e6, 300, 370);
