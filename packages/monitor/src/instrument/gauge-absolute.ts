/**
 * Gauge/absolute pressure mix-ups (common practice, no source for the fault pattern).
 *
 * A tag configured as gauge but fed by a transmitter that reads absolute reads one ambient
 * pressure (about 101 325 Pa at sea level, ISO 2533) too high once converted; a tag configured
 * absolute fed by a gauge transmitter reads one ambient too low. On a running machine the mix-up
 * appears when a transmitter is replaced or re-ranged: a lasting level shift of almost exactly
 * +/- ambient. Left alone it moves the computed efficiency and raises a false drift alert, so it
 * is reported as an instrument fault instead.
 *
 * Step detector (windowed median comparison, then a robust step fit; our own composition of
 * common practice, no source):
 *  1. Usable points only (finite value, `valid` not 0); windows count usable points, so a gap
 *     (a transmitter taken out for the swap) joins the levels either side of it.
 *  2. Screening: D_i = median(y[i..i+w)) - median(y[i-w..i)), from one trailing running median.
 *     Medians ignore spikes shorter than w/2 points. Runs of |D| >= ambient/2 are candidates.
 *  3. Location: within a run, the split k that best separates readings above/below the midpoint
 *     of the two window medians (fewest readings on the wrong side).
 *  4. Size: a step plus a common local slope b fitted robustly to the w points either side
 *     (b = median of the pairwise slopes taken within each side, Theil-Sen style, never across
 *     the step); the levels are the medians of the detrended readings, evaluated at the last
 *     reading before and the first reading after the step (no extrapolation across a gap).
 *  5. Accept only when | |shift| - ambient | <= tolerance x ambient and both levels persist: at
 *     least 80 % of the minPersistPoints readings after the step (and of up to as many before
 *     it) lie on their level's side of the midpoint. The slope fit also keeps out changes that
 *     are not abrupt: a ramp or a lagged (controller) response over a few windows' points is
 *     taken largely into the slope, and the step left over falls outside the tolerance.
 * The tag alone cannot say which level is the right one: a step down by one ambient may be the
 * fault or the repair of an earlier one (`revertsAt` marks a step that returns to the level
 * before an earlier finding). A real process change of about one atmosphere cannot be told
 * apart from the tag alone either; the machine cross-check and checkAbsolutePressurePlausible
 * settle it.
 */
import {
  LengthMismatchError,
  MonitorBadInputError,
  TooFewPointsError,
  UnsortedTimesError,
} from '../errors.js';
import { medianInPlace } from '../stats.js';

export type GaugeAbsoluteDirection = 'reads-high' | 'reads-low';
export type GaugeAbsoluteCause =
  | 'absolute transmitter on a gauge tag'
  | 'gauge transmitter on an absolute tag';

/**
 * Accepted ambient pressures [Pa]: a site's barometric pressure lies well inside. The standard
 * atmosphere (ICAO Doc 7488, U.S. Standard Atmosphere 1976) has p = p0 (1 - L h/T0)^(g0 M/(R* L))
 * below 11 km, with p0 = 101 325 Pa, T0 = 288.15 K, L = 6.5 K/km, g0 = 9.80665 m/s2,
 * M = 28.9644 g/mol, R* = 8.31432 J/(mol K): 30.7 kPa at 9 km geopotential height (22.63 kPa at
 * 11 km, as those tables list). The bounds catch an ambient given in bar (1.013) or kPa (101.3)
 * instead of Pa.
 */
export const AMBIENT_PRESSURE_RANGE: Readonly<{ min: number; max: number }> = { min: 30_000, max: 120_000 };

export interface GaugeAbsoluteInput {
  /** Sample times [epoch ms], non-decreasing. */
  readonly t: ArrayLike<number>;
  /** The tag's readings converted to Pa as configured (NaN = missing). */
  readonly value: ArrayLike<number>;
  /** The site's ambient (barometric) pressure [Pa]. */
  readonly ambientPressure: number;
  /** 1 = usable, 0 = excluded (for example from validateAligned). */
  readonly valid?: Uint8Array;
}

export interface GaugeAbsoluteOptions {
  /** Usable readings in each window either side of a candidate step; default 15, at least 3. */
  readonly windowPoints?: number;
  /** Largest | |shift| - ambient | accepted, as a fraction of ambient; default 0.15, in (0, 0.5). */
  readonly tolerance?: number;
  /** Readings each level must hold for (see module comment); default windowPoints. */
  readonly minPersistPoints?: number;
}

export interface GaugeAbsoluteFinding {
  /** Time of the first reading at the new level [epoch ms]. */
  readonly at: number;
  /** Index of that reading in the input arrays. */
  readonly index: number;
  readonly direction: GaugeAbsoluteDirection;
  /** Size of the step, levelAfter - levelBefore [Pa]. */
  readonly shift: number;
  /** shift / ambientPressure [-]; near +1 or -1. */
  readonly shiftInAmbients: number;
  /** Level just before the step [Pa]. */
  readonly levelBefore: number;
  /** Level just after the step [Pa]. */
  readonly levelAfter: number;
  readonly likelyCause: GaugeAbsoluteCause;
  /**
   * Time [epoch ms] of an earlier finding of the opposite direction whose level before this
   * step returns to: the two bound an interval where one of the two levels is wrong.
   */
  readonly revertsAt?: number;
}

/** Fraction of the readings that must sit on their level's side of the midpoint. */
const MIN_PERSIST_FRACTION = 0.8;

/** Throws MonitorBadInputError unless `a` is a barometric pressure in Pa (AMBIENT_PRESSURE_RANGE). */
export function checkAmbientPressure(a: number): void {
  if (!(Number.isFinite(a) && a >= AMBIENT_PRESSURE_RANGE.min && a <= AMBIENT_PRESSURE_RANGE.max))
    throw new MonitorBadInputError(
      'ambientPressure',
      a,
      `must be the site's barometric pressure in Pa, ${AMBIENT_PRESSURE_RANGE.min}..${AMBIENT_PRESSURE_RANGE.max} (bar or kPa given?)`,
    );
}

function causeOf(direction: GaugeAbsoluteDirection): GaugeAbsoluteCause {
  return direction === 'reads-high'
    ? 'absolute transmitter on a gauge tag'
    : 'gauge transmitter on an absolute tag';
}

/** First index in sorted buf[0..len) with buf[index] >= v. */
function lowerBound(buf: Float64Array, len: number, v: number): number {
  let lo = 0;
  let hi = len;
  while (lo < hi) {
    const mid = (lo + hi) >>> 1;
    if ((buf[mid] as number) < v) lo = mid + 1;
    else hi = mid;
  }
  return lo;
}

/**
 * Trailing running median: out[j] = median of y[j-w+1..j] for j >= w-1, NaN before. Every y must
 * be finite. A sorted window updated by binary search and one block move per step: O(n w).
 */
export function runningMedian(y: ArrayLike<number>, w: number): Float64Array {
  if (!(Number.isInteger(w) && w >= 1)) throw new MonitorBadInputError('w', w, 'integer >= 1');
  const n = y.length;
  const out = new Float64Array(n).fill(Number.NaN);
  const buf = new Float64Array(w);
  const h = w >> 1;
  let len = 0;
  for (let j = 0; j < n; j++) {
    if (j >= w) {
      const old = y[j - w] as number;
      const pos = lowerBound(buf, len, old);
      buf.copyWithin(pos, pos + 1, len);
      len--;
    }
    const v = y[j] as number;
    const pos = lowerBound(buf, len, v);
    buf.copyWithin(pos + 1, pos, len);
    buf[pos] = v;
    len++;
    if (j >= w - 1)
      out[j] = w % 2 === 1 ? (buf[h] as number) : ((buf[h - 1] as number) + (buf[h] as number)) / 2;
  }
  return out;
}

interface StepFit {
  readonly levelBefore: number;
  readonly levelAfter: number;
}

/** Robust step-plus-slope fit at split k over y[k-w..k+w) (module comment, step 4). */
function fitStep(y: Float64Array, tt: Float64Array, k: number, w: number): StepFit {
  const slopes: number[] = [];
  for (const [from, to] of [
    [k - w, k],
    [k, k + w],
  ] as const) {
    for (let i = from; i < to; i++)
      for (let j = i + 1; j < to; j++) {
        const dt = (tt[j] as number) - (tt[i] as number);
        if (dt > 0) slopes.push(((y[j] as number) - (y[i] as number)) / dt);
      }
  }
  const b = slopes.length > 0 ? medianInPlace(slopes) : 0;
  const tBefore = tt[k - 1] as number;
  const tAfter = tt[k] as number;
  const before = new Float64Array(w);
  const after = new Float64Array(w);
  for (let i = 0; i < w; i++) {
    before[i] = (y[k - w + i] as number) - b * ((tt[k - w + i] as number) - tBefore);
    after[i] = (y[k + i] as number) - b * ((tt[k + i] as number) - tAfter);
  }
  return { levelBefore: medianInPlace(before), levelAfter: medianInPlace(after) };
}

interface StepSettings {
  readonly w: number;
  readonly tolerance: number;
  readonly persist: number;
}

function stepSettings(options: GaugeAbsoluteOptions): StepSettings {
  const w = options.windowPoints ?? 15;
  const tolerance = options.tolerance ?? 0.15;
  const persist = options.minPersistPoints ?? w;
  if (!(Number.isInteger(w) && w >= 3)) throw new MonitorBadInputError('windowPoints', w, 'integer >= 3');
  if (!(tolerance > 0 && tolerance < 0.5))
    throw new MonitorBadInputError('tolerance', tolerance, 'fraction of ambient in (0, 0.5)');
  if (!(Number.isInteger(persist) && persist >= 1))
    throw new MonitorBadInputError('minPersistPoints', persist, 'integer >= 1');
  return { w, tolerance, persist };
}

/** The usable readings in order: values, times and their input indices. */
interface Usable {
  readonly y: Float64Array;
  readonly tt: Float64Array;
  readonly index: Int32Array;
  readonly m: number;
}

/** Step 1: the usable readings (valid, finite), after checking the times are finite and sorted. */
function usableReadings(input: GaugeAbsoluteInput, w: number): Usable {
  const { t, value, valid } = input;
  const n = t.length;
  if (value.length !== n) throw new LengthMismatchError('value', n, value.length);
  if (valid !== undefined && valid.length !== n) throw new LengthMismatchError('valid', n, valid.length);
  const index = new Int32Array(n);
  let m = 0;
  let previous = Number.NEGATIVE_INFINITY;
  for (let i = 0; i < n; i++) {
    const ti = t[i] as number;
    if (!Number.isFinite(ti)) throw new MonitorBadInputError(`t[${i}]`, ti, 'sample time must be finite');
    if (ti < previous) throw new UnsortedTimesError('t', i, previous, ti);
    previous = ti;
    if (valid !== undefined && valid[i] === 0) continue;
    if (Number.isFinite(value[i] as number)) index[m++] = i;
  }
  if (m < 2 * w) throw new TooFewPointsError('detectGaugeAbsoluteStep', m, 2 * w);
  const y = new Float64Array(m);
  const tt = new Float64Array(m);
  for (let j = 0; j < m; j++) {
    const i = index[j] as number;
    y[j] = value[i] as number;
    tt[j] = t[i] as number;
  }
  return { y, tt, index, m };
}

/** Step 3: the split with the fewest readings on the wrong side of the midpoint; -1 when none fits. */
function bestSplit(
  u: Usable,
  med: Float64Array,
  w: number,
  runStart: number,
  runEnd: number,
  peak: number,
): number {
  const { y, m } = u;
  const low = med[peak - 1] as number;
  const high = med[peak + w - 1] as number;
  const mid = (low + high) / 2;
  const up = high > low ? 1 : -1;
  const a = Math.max(0, runStart - w);
  const b = Math.min(m, runEnd + w);
  let cost = 0;
  for (let j = a; j < b; j++) if (up * ((y[j] as number) - mid) <= 0) cost++;
  let best = Number.POSITIVE_INFINITY;
  let k = -1;
  for (let s = a; s < b; s++) {
    // cost is the count for split s (new level from s on); moving past s updates it.
    if (cost < best && s >= w && s + w <= m) {
      best = cost;
      k = s;
    }
    cost += up * ((y[s] as number) - mid) > 0 ? 1 : -1;
  }
  return k;
}

/** Step 5, second part: both levels hold for `persist` readings either side of split k. */
function persists(y: Float64Array, m: number, k: number, fit: StepFit, persist: number): boolean {
  if (k + persist > m) return false;
  const shift = fit.levelAfter - fit.levelBefore;
  const threshold = fit.levelBefore + shift / 2;
  const sign = shift > 0 ? 1 : -1;
  let onNew = 0;
  for (let j = k; j < k + persist; j++) if (sign * ((y[j] as number) - threshold) > 0) onNew++;
  if (onNew < MIN_PERSIST_FRACTION * persist) return false;
  const from = Math.max(0, k - persist);
  let onOld = 0;
  for (let j = from; j < k; j++) if (sign * ((y[j] as number) - threshold) < 0) onOld++;
  return onOld >= MIN_PERSIST_FRACTION * (k - from);
}

/** A step found at split k, marked as reverting the previous finding when it returns to its level. */
function findingAt(
  input: GaugeAbsoluteInput,
  u: Usable,
  k: number,
  fit: StepFit,
  prior: GaugeAbsoluteFinding | undefined,
  band: number,
): GaugeAbsoluteFinding {
  const ambient = input.ambientPressure;
  const shift = fit.levelAfter - fit.levelBefore;
  const direction: GaugeAbsoluteDirection = shift > 0 ? 'reads-high' : 'reads-low';
  const reverts =
    prior !== undefined &&
    prior.direction !== direction &&
    Math.abs(fit.levelAfter - prior.levelBefore) <= band
      ? prior.at
      : undefined;
  const i = u.index[k] as number;
  return {
    at: input.t[i] as number,
    index: i,
    direction,
    shift,
    shiftInAmbients: shift / ambient,
    levelBefore: fit.levelBefore,
    levelAfter: fit.levelAfter,
    likelyCause: causeOf(direction),
    ...(reverts === undefined ? {} : { revertsAt: reverts }),
  };
}

/**
 * Finds lasting level shifts of about +/- one ambient pressure in a pressure tag (a gauge/absolute
 * mix-up; method in the module comment). Findings are in time order.
 * Throws LengthMismatchError, UnsortedTimesError, MonitorBadInputError (options, ambient, non-finite
 * time) and TooFewPointsError (fewer than 2 x windowPoints usable readings).
 */
export function detectGaugeAbsoluteStep(
  input: GaugeAbsoluteInput,
  options: GaugeAbsoluteOptions = {},
): GaugeAbsoluteFinding[] {
  const ambient = input.ambientPressure;
  checkAmbientPressure(ambient);
  const { w, tolerance, persist } = stepSettings(options);
  const u = usableReadings(input, w);
  const m = u.m;
  // Step 2: D_i = M[i+w-1] - M[i-1] (after-window median minus before-window median).
  const med = runningMedian(u.y, w);
  const screen = ambient / 2;
  const band = tolerance * ambient;
  const findings: GaugeAbsoluteFinding[] = [];
  let lastK = Number.NEGATIVE_INFINITY;
  const consider = (runStart: number, runEnd: number, peak: number): void => {
    const k = bestSplit(u, med, w, runStart, runEnd, peak);
    if (k < 0 || k - lastK < w) return;
    // Step 4: size of the step with a common local slope; step 5: its size, then persistence.
    const fit = fitStep(u.y, u.tt, k, w);
    if (Math.abs(Math.abs(fit.levelAfter - fit.levelBefore) - ambient) > band) return;
    if (!persists(u.y, m, k, fit, persist)) return;
    findings.push(findingAt(input, u, k, fit, findings[findings.length - 1], band));
    lastK = k;
  };
  let runStart = -1;
  let runSign = 0;
  let peak = -1;
  let peakSize = 0;
  for (let i = w; i <= m - w + 1; i++) {
    const d = i <= m - w ? (med[i + w - 1] as number) - (med[i - 1] as number) : 0;
    const s = d >= screen ? 1 : d <= -screen ? -1 : 0;
    if (s !== runSign && runSign !== 0) {
      consider(runStart, i - 1, peak);
      runSign = 0;
    }
    if (s !== 0 && runSign === 0) {
      runStart = i;
      runSign = s;
      peak = i;
      peakSize = 0;
    }
    if (s !== 0 && Math.abs(d) > peakSize) {
      peak = i;
      peakSize = Math.abs(d);
    }
  }
  return findings;
}

export type AbsolutePressureCheck =
  | { readonly plausible: true }
  | {
      readonly plausible: false;
      readonly reason: 'not-positive' | 'atmospheric-inlet-low' | 'atmospheric-inlet-high';
      readonly likelyCause: GaugeAbsoluteCause;
      /** The reading [Pa] and its ratio to ambient [-]. */
      readonly valuePa: number;
      readonly ratioToAmbient: number;
      readonly text: string;
    };

export interface AbsolutePressureContext {
  /** The site's ambient (barometric) pressure [Pa]. */
  readonly ambientPressure: number;
  /** The point is an inlet open to the atmosphere (an air compressor or fan suction). */
  readonly atmosphericInlet?: boolean;
}

/**
 * Plausibility of one absolute pressure [Pa] (common practice, no source): an absolute pressure at
 * or below zero cannot be read, so a gauge transmitter feeds an absolute tag; an inlet open to the
 * atmosphere must read near ambient, so below 0.5 x ambient points to a gauge transmitter on an
 * absolute tag (it reads near 0) and above 1.5 x ambient to an absolute transmitter on a gauge tag
 * (near 2 x ambient once converted). Bounds inclusive: exactly 0.5 or 1.5 x ambient is plausible.
 * Throws MonitorBadInputError for a non-finite value or an ambient outside AMBIENT_PRESSURE_RANGE.
 */
export function checkAbsolutePressurePlausible(
  valuePa: number,
  context: AbsolutePressureContext,
): AbsolutePressureCheck {
  const ambient = context.ambientPressure;
  checkAmbientPressure(ambient);
  if (!Number.isFinite(valuePa))
    throw new MonitorBadInputError('valuePa', valuePa, 'must be a finite pressure');
  const ratioToAmbient = valuePa / ambient;
  if (valuePa <= 0)
    return {
      plausible: false,
      reason: 'not-positive',
      likelyCause: 'gauge transmitter on an absolute tag',
      valuePa,
      ratioToAmbient,
      text: `absolute pressure ${valuePa} Pa is at or below zero`,
    };
  if (context.atmosphericInlet === true && ratioToAmbient < 0.5)
    return {
      plausible: false,
      reason: 'atmospheric-inlet-low',
      likelyCause: 'gauge transmitter on an absolute tag',
      valuePa,
      ratioToAmbient,
      text: `inlet open to the atmosphere reads ${valuePa} Pa, below half the ambient ${ambient} Pa`,
    };
  if (context.atmosphericInlet === true && ratioToAmbient > 1.5)
    return {
      plausible: false,
      reason: 'atmospheric-inlet-high',
      likelyCause: 'absolute transmitter on a gauge tag',
      valuePa,
      ratioToAmbient,
      text: `inlet open to the atmosphere reads ${valuePa} Pa, above 1.5 x the ambient ${ambient} Pa`,
    };
  return { plausible: true };
}
