/**
 * The instrument step's logic, pure: gauge/absolute pressure mix-ups found over a window of a
 * machine's results (the fault pattern is common practice, no source; the detectors are
 * packages/monitor/src/instrument). services/jobs/src/instrument reads the window and the stored
 * findings, stores what this plans, and has the compute pass recompute the rows it changes.
 *
 * Per pressure role (inletPressure, outletPressure):
 *  1. detectGaugeAbsoluteStep over each uniformly spaced stretch of the window (points where the
 *     machine runs only), with the site's ambient pressure.
 *  2. A new step is checked through the machine with pressureRatioConsistency for compressors
 *     and turbines: 'consistent' (the temperatures followed the pressure: a real process change)
 *     dismisses it. Pumps (liquid: the temperatures do not follow the pressure) and fans (pressure
 *     ratio near 1: the exponent is ill-conditioned) are not cross-checked, nor a machine whose
 *     data cannot feed the check (too few points, ratio near 1): the tag's step stands alone.
 *  3. A step seen before (as a step or as the revert that ended one) is left alone; a step of the
 *     opposite direction back to the level before (`revertsAt`) ends a standing finding.
 * Which side of a step is wrong is not decided by the data (a repair looks like the opposite
 * mix-up): a lone reads-low step is reported as a gauge transmitter on an absolute tag.
 */
import {
  detectGaugeAbsoluteStep,
  type GaugeAbsoluteFinding,
  MonitorError,
  type PressureRatioConsistency,
  pressureRatioConsistency,
} from '@isentrope/monitor';
import type { FindingStatus, PressureRole } from './findings.js';

/** A window of one machine's results, in time order [ms, Pa absolute, K]; running: 1 where it runs. */
export interface ResultWindow {
  readonly t: Float64Array;
  readonly pIn: Float64Array;
  readonly pOut: Float64Array;
  readonly TIn: Float64Array;
  readonly TOut: Float64Array;
  readonly running: Uint8Array;
}

export interface GaugeStepOptions {
  /** Grid step of the results [ms] (two findings within a window of points are one). */
  readonly stepMs: number;
  /** Points in each detector window (the detector's default is 15). */
  readonly windowPoints: number;
}

export type CrossCheckVerdict = 'mix-up' | 'unexplained' | 'consistent' | 'not-checked';

export interface CrossCheck {
  readonly verdict: CrossCheckVerdict;
  readonly detail: Readonly<Record<string, unknown>>;
}

/**
 * [start, end, spacing] of the runs of equally spaced times (results on one grid) in t; two
 * neighbouring runs share their boundary point.
 */
export function uniformStretches(t: ArrayLike<number>): [number, number, number][] {
  const out: [number, number, number][] = [];
  let a = 0;
  while (a < t.length - 1) {
    const spacing = (t[a + 1] as number) - (t[a] as number);
    let b = a + 2;
    while (b < t.length && (t[b] as number) - (t[b - 1] as number) === spacing) b++;
    out.push([a, b, spacing]);
    a = b - 1;
  }
  return out;
}

/** Step 1: the steps of one pressure role over every stretch of the window, indices into the window. */
export function findGaugeAbsoluteSteps(
  w: ResultWindow,
  role: PressureRole,
  ambient: number,
  o: GaugeStepOptions,
): GaugeAbsoluteFinding[] {
  const p = role === 'inletPressure' ? w.pIn : w.pOut;
  const n = w.t.length;
  const value = new Float64Array(n);
  for (let i = 0; i < n; i++) value[i] = w.running[i] === 1 ? (p[i] as number) : Number.NaN;
  const findings: GaugeAbsoluteFinding[] = [];
  for (const [a, b, spacing] of uniformStretches(w.t)) {
    // The detector's windows are counted in points: keep them near windowPoints minutes long
    // on a coarser grid (a history computed every 15 minutes), where slow process swings
    // would otherwise bend a window of 15 points (common practice, no source).
    const windowPoints = Math.max(
      4,
      Math.min(o.windowPoints, Math.round((o.windowPoints * o.stepMs) / spacing)),
    );
    if (b - a < 2 * windowPoints) continue;
    try {
      const found = detectGaugeAbsoluteStep(
        { t: w.t.subarray(a, b), value: value.subarray(a, b), ambientPressure: ambient },
        { windowPoints },
      );
      for (const f of found) findings.push({ ...f, index: f.index + a });
    } catch (error) {
      // Too few running points in the stretch: nothing new to find there this run.
      if (!(error instanceof MonitorError && error.code === 'MONITOR_TOO_FEW_POINTS')) throw error;
    }
  }
  return findings;
}

/** Step 2: the machine cross-check of a new step. */
export function crossCheckStep(
  kind: 'turbine' | 'compressor' | 'pump' | 'fan',
  role: PressureRole,
  f: GaugeAbsoluteFinding,
  w: ResultWindow,
  ambient: number,
  windowPoints: number,
): CrossCheck {
  if (kind === 'pump')
    return {
      verdict: 'not-checked',
      detail: { reason: 'pump: a liquid, the temperatures do not follow the pressure' },
    };
  if (kind === 'fan')
    return {
      verdict: 'not-checked',
      detail: { reason: 'fan: pressure ratio near 1, the exponent is ill-conditioned' },
    };
  let r: PressureRatioConsistency;
  try {
    r = pressureRatioConsistency(
      {
        t: w.t,
        pIn: w.pIn,
        pOut: w.pOut,
        TIn: w.TIn,
        TOut: w.TOut,
        ambientPressure: ambient,
        valid: w.running,
      },
      f.at,
      { windowPoints },
    );
  } catch (error) {
    if (!(error instanceof MonitorError)) throw error;
    return { verdict: 'not-checked', detail: { reason: error.message, code: error.code } };
  }
  const tag = role === 'inletPressure' ? 'inlet' : 'outlet';
  const mixUp =
    r.mixUp === undefined
      ? {}
      : {
          mixUp: {
            tag: r.mixUp.tag,
            direction: r.mixUp.direction,
            exponentCorrected: r.mixUp.exponentCorrected,
          },
          // The machine pins the same tag and direction as the tag's own step.
          agrees: r.mixUp.tag === tag && r.mixUp.direction === f.direction,
        };
  return {
    verdict: r.verdict,
    detail: {
      exponentBefore: r.exponentBefore,
      exponentAfter: r.exponentAfter,
      threshold: r.threshold,
      ...mixUp,
    },
  };
}

/** A stored finding of one role as the plan sees it (id as stored). */
export interface KnownFinding {
  readonly id: number;
  readonly at: number;
  readonly endedAt: number | null;
  readonly status: FindingStatus;
}

/** A new finding to store; endedAt set when a later step of the same window already reverts it. */
export interface NewFinding {
  readonly finding: GaugeAbsoluteFinding;
  readonly check: CrossCheck;
  /** As first judged: 'standing', or 'dismissed' when the cross-check found a real change. */
  readonly judged: 'standing' | 'dismissed';
  status: FindingStatus;
  endedAt: number | null;
}

export interface FindingPlan {
  readonly inserts: NewFinding[];
  /** Stored standing findings a step of this window reverts: id and the revert's time [ms]. */
  readonly reverts: { readonly id: number; readonly endedAt: number }[];
  /** Earliest time [ms] from which the flags of computed rows change; undefined: none change. */
  readonly changedFromMs: number | undefined;
}

/**
 * Step 3: what the steps of this window change against the stored findings of the role. Steps
 * within one detector window (windowPoints x stepMs) of a stored step or revert are the same one.
 */
export function planFindings(
  stored: readonly KnownFinding[],
  steps: readonly GaugeAbsoluteFinding[],
  check: (f: GaugeAbsoluteFinding) => CrossCheck,
  o: GaugeStepOptions,
): FindingPlan {
  const tol = o.windowPoints * o.stepMs;
  const near = (a: number | null, b: number): boolean => a !== null && Math.abs(a - b) <= tol;
  type Entry = { at: number; endedAt: number | null; status: FindingStatus; id?: number; added?: NewFinding };
  const known: Entry[] = stored.map((s) => ({ ...s }));
  const inserts: NewFinding[] = [];
  const reverts: { id: number; endedAt: number }[] = [];
  let changed: number | undefined;
  const change = (ms: number): void => {
    changed = changed === undefined ? ms : Math.min(changed, ms);
  };
  for (const f of steps) {
    // Seen on an earlier run (as a step, or as the revert that ended one).
    if (known.some((s) => near(s.at, f.at) || near(s.endedAt, f.at))) continue;
    const prior =
      f.revertsAt === undefined ? undefined : known.find((s) => near(s.at, f.revertsAt as number));
    // The return of a dismissed (real) change is real too: nothing to do.
    if (prior?.status === 'dismissed') continue;
    if (prior?.status === 'standing') {
      prior.status = 'reverted';
      prior.endedAt = f.at;
      if (prior.added !== undefined) {
        prior.added.status = 'reverted';
        prior.added.endedAt = f.at;
      } else reverts.push({ id: prior.id as number, endedAt: f.at });
      change(f.at);
      continue;
    }
    const c = check(f);
    const judged = c.verdict === 'consistent' ? 'dismissed' : 'standing';
    const added: NewFinding = { finding: f, check: c, judged, status: judged, endedAt: null };
    inserts.push(added);
    known.push({ at: f.at, endedAt: null, status: judged, added });
    if (judged === 'standing') change(f.at);
  }
  return { inserts, reverts, changedFromMs: changed };
}

/** A range of stored rows and the grid step they were computed on [ms]. */
export interface GridRange {
  readonly fromMs: number;
  readonly toMs: number;
  readonly stepMs: number;
}

/**
 * The stored rows of a window from `fromMs` on, as ranges each on the grid its rows were computed
 * on (a history on a 15-minute grid, then the 1-minute grid), for the compute pass to recompute.
 * A stretch of two points is the gap between two grids, not a grid: its ends belong to the
 * stretches either side.
 */
export function gridRangesFrom(t: ArrayLike<number>, fromMs: number): GridRange[] {
  const grids = uniformStretches(t).filter(([a, b]) => b - a >= 3);
  const out: GridRange[] = [];
  grids.forEach(([a, b, stepMs], k) => {
    const next = grids[k + 1];
    const last = (t[b - 1] as number) + stepMs;
    // A shared boundary point belongs to the next grid, which computed it.
    const toMs = next === undefined ? last : Math.min(last, t[next[0]] as number);
    const from = Math.max(t[a] as number, fromMs);
    if (toMs > from) out.push({ fromMs: from, toMs, stepMs });
  });
  return out;
}
