/**
 * The compute pipeline's options and the rows it reads and writes: raw samples in, one result row
 * per grid point out (SI; see migrations/0002_timeseries.sql).
 */
import { ComputeError } from './errors.js';

/** Raw samples of one tag, sorted by time: times [ms], values [tag unit], quality codes as stored. */
export interface RawSeries {
  readonly t: ArrayLike<number>;
  readonly value: ArrayLike<number>;
  readonly quality: ArrayLike<number>;
}

export interface ComputeOptions {
  /** Grid step [ms]; default 60 000. `gridMs` is the same setting under its public name. */
  readonly stepMs?: number;
  /** Grid step [ms] (results at multiples of it); default 60 000. */
  readonly gridMs?: number;
  /** Longest hold of a sample [ms]; default 5 steps. */
  readonly maxAgeMs?: number;
  /** Segment length [ms], a multiple of the step; default one hour, or 60 steps when longer. */
  readonly segmentMs?: number;
  /** Grid points computed before a segment (filter warm-up, stuck window); default 60. */
  readonly lookbackPoints?: number;
  /** Trailing window of the stuck-transmitter test [points]; default 30. */
  readonly stuckWindow?: number;
  /** Half window of the spike test [points]; default 5; also the lookahead. */
  readonly spikeHalfWindow?: number;
  /**
   * Uncertainty propagation: 'segment' (default) evaluates the GUM sensitivity coefficients once
   * per operating point of a segment (see linearise.ts); 'point' runs the full numerical GUM at
   * every point (2n + 1 model evaluations each), the reference the segment form is tested against.
   */
  readonly gum?: 'segment' | 'point';
  /** Relative distance in any input beyond which a new linearisation point is taken; default 0.05. */
  readonly relinearise?: number;
}

export interface ResolvedComputeOptions {
  readonly stepMs: number;
  readonly maxAgeMs: number;
  readonly segmentMs: number;
  readonly lookbackPoints: number;
  readonly stuckWindow: number;
  readonly spikeHalfWindow: number;
  readonly gum: 'segment' | 'point';
  readonly relinearise: number;
}

export function resolveComputeOptions(o: ComputeOptions = {}): ResolvedComputeOptions {
  if (o.gridMs !== undefined && o.stepMs !== undefined && o.gridMs !== o.stepMs)
    throw new ComputeError('COMPUTE_BAD_CONFIG', `gridMs ${o.gridMs} and stepMs ${o.stepMs} disagree`, {
      gridMs: o.gridMs,
      stepMs: o.stepMs,
    });
  const stepMs = o.gridMs ?? o.stepMs ?? 60_000;
  // A coarse grid keeps segments of 60 points, so the lookback stays in proportion to the output.
  const segmentMs = o.segmentMs ?? Math.max(3_600_000, 60 * stepMs);
  if (!(stepMs > 0) || !Number.isInteger(stepMs) || segmentMs % stepMs !== 0)
    throw new ComputeError(
      'COMPUTE_BAD_CONFIG',
      `segmentMs ${segmentMs} must be a positive multiple of stepMs ${stepMs}`,
      {
        stepMs,
        segmentMs,
      },
    );
  const relinearise = o.relinearise ?? 0.05;
  if (!(relinearise >= 0))
    throw new ComputeError('COMPUTE_BAD_CONFIG', `relinearise ${relinearise} must be >= 0`, { relinearise });
  return {
    stepMs,
    maxAgeMs: o.maxAgeMs ?? 5 * stepMs,
    segmentMs,
    lookbackPoints: o.lookbackPoints ?? 60,
    stuckWindow: o.stuckWindow ?? 30,
    spikeHalfWindow: o.spikeHalfWindow ?? 5,
    gum: o.gum ?? 'segment',
    relinearise,
  };
}

/** One row of the results table (SI; see migrations/0002_timeseries.sql). */
export interface ResultRow {
  readonly machineId: number;
  /** Grid interval start [ms]. */
  readonly time: number;
  readonly pIn: number | null;
  readonly tIn: number | null;
  readonly hIn: number | null;
  readonly sIn: number | null;
  readonly pOut: number | null;
  readonly tOut: number | null;
  readonly hOut: number | null;
  readonly sOut: number | null;
  readonly tOutS: number | null;
  readonly hOutS: number | null;
  readonly massFlow: number | null;
  readonly efficiency: number | null;
  readonly uEfficiency: number | null;
  readonly polytropicEfficiency: number | null;
  readonly uPolytropicEfficiency: number | null;
  readonly specificWork: number | null;
  readonly uSpecificWork: number | null;
  readonly power: number | null;
  readonly uPower: number | null;
  readonly entropyGeneration: number | null;
  readonly uEntropyGeneration: number | null;
  readonly operatingPoint: number | null;
  readonly steady: boolean;
  /** Notes ("not-steady", "missing:massFlow") and instrument faults, the latter prefixed "fault:". */
  readonly flags: readonly string[];
  readonly valid: boolean;
}
