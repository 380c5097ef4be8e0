/**
 * Machine-model throughput on one core: cases per second.
 * Run: npx tsx packages/thermo/bench/machines.bench.ts (one JSON line per figure).
 */
import { naturalGas } from '../src/gas/index.js';
import { evaluateMachine } from '../src/machines/index.js';
import type { MachineInput } from '../src/machines/types.js';
import { water } from '../src/steam/index.js';
import { evaluateMachineWithUncertainty, type MachineUncertainties } from '../src/uncertainty/index.js';
import { emit, rate } from './harness.js';

// Steam turbine, superheated exhaust (dry outlet, so three IF97 state points: PT in, PT out, PS out).
const steamCase = (i: number): MachineInput => ({
  kind: 'turbine',
  fluid: water,
  inlet: { p: 10e6, T: 773.15 + (i % 100) * 0.01 },
  outlet: { p: 1e6, T: 523.15 },
  massFlow: 50,
});
emit(
  'thermo.machines.turbine_steam',
  rate((i) => evaluateMachine(steamCase(i)).isentropicEfficiency ?? 0),
  'cases/s',
);

// Natural-gas compressor on Peng-Robinson (invented composition, typical pipeline gas).
const gas = naturalGas({ CH4: 0.9, C2H6: 0.06, C3H8: 0.02, N2: 0.01, CO2: 0.01 }, 'peng-robinson');
emit(
  'thermo.machines.compressor_natural_gas_pr',
  rate(
    (i) =>
      evaluateMachine({
        kind: 'compressor',
        fluid: gas,
        inlet: { p: 40e5, T: 293.15 + (i % 100) * 0.01 },
        outlet: { p: 70e5, T: 340 },
        massFlow: 30,
      }).isentropicEfficiency ?? 0,
  ),
  'cases/s',
);

// Steam turbine with GUM uncertainty on six inputs.
const u: MachineUncertainties = {
  'inlet.p': { kind: 'reading', percent: 0.25 },
  'inlet.T': { kind: 'absolute', value: 1 },
  'outlet.p': { kind: 'reading', percent: 0.25 },
  'outlet.T': { kind: 'absolute', value: 1 },
  massFlow: { kind: 'reading', percent: 1 },
  shaftPower: { kind: 'reading', percent: 0.5 },
};
emit(
  'thermo.machines.turbine_steam_gum',
  rate((i) => {
    // Built field by field: a spread copy ({ ...steamCase(i), shaftPower }) as the input measured
    // about 2.5 times slower here (V8 object shapes), though every field is copied before use.
    const c = steamCase(i);
    const r = evaluateMachineWithUncertainty(
      {
        kind: c.kind,
        fluid: c.fluid,
        inlet: c.inlet,
        outlet: c.outlet,
        massFlow: c.massFlow,
        shaftPower: 20e6,
      },
      u,
    );
    return r.uncertainty.isentropicEfficiency ?? 0;
  }),
  'cases/s',
);
