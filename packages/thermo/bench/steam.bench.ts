/**
 * IAPWS-IF97 speed on one core: evaluations per CPU-second of the allocation-free scalar path.
 * One JSON line per figure. Run: npx tsx packages/thermo/bench/steam.bench.ts
 */
import {
  enthalpyEntropyPT,
  enthalpyPS,
  enthalpyPT,
  entropyPT,
  saturatedLiquid,
  saturatedVapour,
  temperaturePH,
  waterPT,
} from '../src/steam/index.js';
import { emit, rate } from './harness.js';

const N = 4096;

/** Calls per CPU-second of f over the N prepared inputs, printed as one figure. */
function evals(bench: string, f: (i: number) => number): void {
  emit(
    bench,
    rate((i) => f(i & (N - 1))),
    'evals/s',
  );
}

/** Deterministic inputs (invented ranges typical of turbines and feed pumps). */
function inputs(fill: (r: number, r2: number) => [number, number]): [Float64Array, Float64Array] {
  const a = new Float64Array(N);
  const b = new Float64Array(N);
  let seed = 12345;
  const next = (): number => {
    seed = (seed * 1103515245 + 12345) % 2147483648;
    return seed / 2147483648;
  };
  for (let i = 0; i < N; i++) {
    const [x, y] = fill(next(), next());
    a[i] = x;
    b[i] = y;
  }
  return [a, b];
}

// Region 1: compressed liquid 1..30 MPa, 290..450 K.
const [p1, t1] = inputs((r, r2) => [1e6 + r * 29e6, 290 + r2 * 160]);
// Region 2: superheated steam 0.1..10 MPa, 600..850 K.
const [p2, t2] = inputs((r, r2) => [0.1e6 + r * 9.9e6, 600 + r2 * 250]);

evals('thermo.if97.pt_hs_region1', (i) => enthalpyPT(p1[i]!, t1[i]!) + entropyPT(p1[i]!, t1[i]!));
evals('thermo.if97.pt_hs_region2', (i) => enthalpyPT(p2[i]!, t2[i]!) + entropyPT(p2[i]!, t2[i]!));
const hs = new Float64Array(2);
evals('thermo.if97.pt_hs_pair_region1', (i) => {
  enthalpyEntropyPT(p1[i]!, t1[i]!, hs);
  return hs[0]! + hs[1]!;
});
evals('thermo.if97.pt_hs_pair_region2', (i) => {
  enthalpyEntropyPT(p2[i]!, t2[i]!, hs);
  return hs[0]! + hs[1]!;
});

// h(p,s), superheated outcome: s of the region-2 states, exit pressure a third of the inlet.
const sSup = Float64Array.from(p2, (p, i) => waterPT(p, t2[i]!).s);
const pSup = Float64Array.from(p2, (p) => p / 3);
evals('thermo.if97.h_ps_superheated', (i) => enthalpyPS(pSup[i]!, sSup[i]!));

// h(p,s), wet outcome: condenser 5..15 kPa, quality 0.80..0.98.
const [pWet, xWet] = inputs((r, r2) => [5e3 + r * 10e3, 0.8 + r2 * 0.18]);
const sWet = Float64Array.from(pWet, (p, i) => {
  const l = saturatedLiquid(p);
  return l.s + xWet[i]! * (saturatedVapour(p).s - l.s);
});
evals('thermo.if97.h_ps_wet', (i) => enthalpyPS(pWet[i]!, sWet[i]!));

// T(p,h) in regions 1 and 2.
const h1 = Float64Array.from(p1, (p, i) => enthalpyPT(p, t1[i]!));
const h2 = Float64Array.from(p2, (p, i) => enthalpyPT(p, t2[i]!));
evals('thermo.if97.t_ph_region1', (i) => temperaturePH(p1[i]!, h1[i]!));
evals('thermo.if97.t_ph_region2', (i) => temperaturePH(p2[i]!, h2[i]!));

// The object path, for comparison.
evals('thermo.if97.water_pt_object_region2', (i) => waterPT(p2[i]!, t2[i]!).h);
