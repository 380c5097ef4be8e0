/**
 * Invented data for tests and benchmarks (not from any plant): a seeded random generator and a
 * synthetic machine whose true efficiency follows a known load curve and a known linear loss.
 * Not exported from the package entry.
 */
import { mulberry32 } from '@isentrope/thermo';

/** Seeded uniform generator on [0, 1): the thermo package's mulberry32. */
export const seededRandom: (seed: number) => () => number = mulberry32;

/** Standard normal draws by the Box-Muller transform from a uniform generator. */
export function seededNormal(seed: number): () => number {
  const u = seededRandom(seed);
  return () => {
    const u1 = Math.max(u(), 1e-300);
    return Math.sqrt(-2 * Math.log(u1)) * Math.cos(2 * Math.PI * u());
  };
}

export interface SyntheticMachineOptions {
  readonly seed: number;
  readonly startMs: number;
  readonly days: number;
  /** Grid step [ms]; default 60 000. */
  readonly stepMs?: number;
  /** True efficiency at load fraction L when new: c0 + c1 L + c2 L^2 [-]. */
  readonly curve: readonly [number, number, number];
  /** True loss rate [-/ms] (negative). */
  readonly lossPerMs: number;
  /** Random noise of one efficiency point [-], standard deviation. */
  readonly noise: number;
  /** A fixed bias of the instruments [-] (the systematic error, unknown to the method). */
  readonly bias: number;
  /** Noise on the load signal [-]. */
  readonly loadNoise: number;
}

export interface SyntheticMachine {
  readonly t: Float64Array;
  /** Measured load fraction [-]. */
  readonly load: Float64Array;
  /** True load fraction [-]. */
  readonly loadTrue: Float64Array;
  /** Measured efficiency [-]. */
  readonly efficiency: Float64Array;
  /** True efficiency [-]. */
  readonly efficiencyTrue: Float64Array;
  /** Size of the load change |Delta L| [-] of the ramp a point lies on; 0 on a plateau. */
  readonly ramping: Float32Array;
}

/**
 * Load plateaus of 2 to 8 hours at levels between 0.5 and 1.0, joined by 30-minute linear ramps.
 * During a ramp the "measured" efficiency carries an extra dynamic error of 0.06 |Delta L|
 * (heat soak; +0.03 for a half-range ramp), which is why transients must be left out of
 * efficiency statistics.
 */
export function syntheticMachine(o: SyntheticMachineOptions): SyntheticMachine {
  const step = o.stepMs ?? 60_000;
  const n = Math.round((o.days * 86_400_000) / step);
  const rnd = seededRandom(o.seed);
  const nrm = seededNormal(o.seed + 1);
  const t = new Float64Array(n);
  const load = new Float64Array(n);
  const loadTrue = new Float64Array(n);
  const efficiency = new Float64Array(n);
  const efficiencyTrue = new Float64Array(n);
  const ramping = new Float32Array(n);
  const rampPts = Math.round(1_800_000 / step);
  let level = 0.75;
  let i = 0;
  while (i < n) {
    const plateau = Math.round(((2 + 6 * rnd()) * 3_600_000) / step);
    for (let k = 0; k < plateau && i < n; k++, i++) loadTrue[i] = level;
    const next = 0.5 + 0.5 * rnd();
    for (let k = 1; k <= rampPts && i < n; k++, i++) {
      loadTrue[i] = level + ((next - level) * k) / rampPts;
      ramping[i] = Math.abs(next - level);
    }
    level = next;
  }
  const [c0, c1, c2] = o.curve;
  for (let j = 0; j < n; j++) {
    t[j] = o.startMs + j * step;
    const L = loadTrue[j] as number;
    load[j] = L + o.loadNoise * nrm();
    const eta = c0 + c1 * L + c2 * L * L + o.lossPerMs * j * step;
    efficiencyTrue[j] = eta;
    efficiency[j] = eta + o.bias + o.noise * nrm() + 0.06 * (ramping[j] as number);
  }
  return { t, load, loadTrue, efficiency, efficiencyTrue, ramping };
}
