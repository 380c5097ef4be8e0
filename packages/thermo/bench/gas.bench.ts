/**
 * Gas property speed: statePT and statePS per second for dry air (ideal gas) and a natural gas
 * on Peng-Robinson. One JSON line per figure. Run: npx tsx packages/thermo/bench/gas.bench.ts
 */
import { dryAir, type GasModel, naturalGas } from '../src/gas/index.js';

function rate(label: string, fn: (i: number) => number, seconds = 2): void {
  // warm-up, then count whole batches until the time is up
  let sink = 0;
  for (let i = 0; i < 2000; i++) sink += fn(i);
  const batch = 2000;
  let n = 0;
  const t0 = performance.now();
  let t = t0;
  while (t - t0 < seconds * 1000) {
    for (let i = 0; i < batch; i++) sink += fn(n + i);
    n += batch;
    t = performance.now();
  }
  const value = n / ((t - t0) / 1000);
  if (Number.isNaN(sink)) throw new Error('bench produced NaN');
  process.stdout.write(
    `${JSON.stringify({ bench: label, value: Number(value.toPrecision(3)), unit: 'evals/s' })}\n`,
  );
}

function run(tag: string, gas: GasModel, p0: number): void {
  const s0 = gas.statePT(p0, 350).s;
  rate(`thermo.gas.${tag}.statePT`, (i) => gas.statePT(p0 * (1 + (i % 97) * 1e-3), 300 + (i % 101)).h);
  rate(`thermo.gas.${tag}.statePS`, (i) => gas.statePS(p0 * (1 + (i % 97) * 1e-3), s0 + (i % 101)).T);
}

run('air_ideal', dryAir(), 1e5);
run(
  'natural_gas_pr',
  naturalGas(
    { methane: 0.9, ethane: 0.05, propane: 0.02, nC4: 0.005, iC4: 0.005, N2: 0.01, CO2: 0.01 },
    'peng-robinson',
  ),
  7e6,
);
