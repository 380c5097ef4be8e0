/**
 * Validation of aligned tag values: which points can be trusted, and why not.
 *
 * Checks per tag (each names its method):
 * - range: value outside the tag's valid range [min, max] (common practice, no source);
 * - stuck transmitter: over a trailing window the standard deviation is below `minStd`, or every
 *   value is identical, while at least one other key tag with a stuck check moves (its own standard
 *   deviation above its own `minStd`) (common practice, no source); all points of such a window are
 *   flagged. A machine at rest, where every tag is flat, is therefore not called stuck;
 * - spike: the Hampel identifier (Hampel 1974, JASA 69, 383; see Pearson 2002, IEEE Trans. Control
 *   Syst. Technol. 10, 55): |x - median| > nSigma x 1.4826 x MAD over a centred window of
 *   2 halfWindow + 1 points; 1.4826 makes the MAD a consistent estimate of sigma for normal noise;
 * - bad quality and missing data carried over from alignment.
 * Machine-model faults (second-law violation: entropy generation negative beyond its uncertainty;
 * impossible readings such as an efficiency above 1) come in from the model per point and are
 * instrument faults, never performance figures.
 */
import { ALIGN_BAD_EXCLUDED, ALIGN_MISSING, ALIGN_STALE, type Aligned } from './align.js';
import { LengthMismatchError, MonitorBadInputError } from './errors.js';

// Local copies: imported bindings can cost a getter call per use in hot loops once transpiled.
const A_MISSING = ALIGN_MISSING;
const A_STALE = ALIGN_STALE;
const A_BAD = ALIGN_BAD_EXCLUDED;

/** Validation flags (bit mask), per tag and per point. */
export const VALID_MISSING = 1;
export const VALID_STALE = 2;
export const VALID_BAD_QUALITY = 4;
export const VALID_RANGE = 8;
export const VALID_STUCK = 16;
export const VALID_SPIKE = 32;
export const VALID_SECOND_LAW = 64;
export const VALID_IMPOSSIBLE = 128;

/** Flags that make a point unusable. Bad-quality samples excluded during alignment do not, on
 * their own: the interval value then comes from the good samples (coverage decides). */
export const INVALIDATING_FLAGS =
  VALID_MISSING | VALID_RANGE | VALID_STUCK | VALID_SPIKE | VALID_SECOND_LAW | VALID_IMPOSSIBLE;
/** Flags that point at the instrument (or the model's view of the instruments), not the machine. */
export const INSTRUMENT_FLAGS =
  VALID_BAD_QUALITY | VALID_RANGE | VALID_STUCK | VALID_SPIKE | VALID_SECOND_LAW | VALID_IMPOSSIBLE;

export type ValidationFlagName =
  | 'missing'
  | 'stale'
  | 'bad-quality'
  | 'range'
  | 'stuck'
  | 'spike'
  | 'second-law'
  | 'impossible';

const FLAG_LIST: readonly (readonly [number, ValidationFlagName, string])[] = [
  [VALID_MISSING, 'missing', 'no value with enough coverage in this interval'],
  [VALID_STALE, 'stale', 'no good sample newer than the maximum age'],
  [VALID_BAD_QUALITY, 'bad-quality', 'the source marked samples as bad'],
  [VALID_RANGE, 'range', 'value outside the valid range of the tag'],
  [VALID_STUCK, 'stuck', 'flat line while other key tags move (stuck transmitter)'],
  [VALID_SPIKE, 'spike', 'spike (Hampel identifier, median and MAD)'],
  [VALID_SECOND_LAW, 'second-law', 'entropy falls across an adiabatic machine beyond its uncertainty'],
  [VALID_IMPOSSIBLE, 'impossible', 'the machine model found the readings impossible'],
];

export interface StuckCheck {
  /** Trailing window length [grid points], at least 3. */
  readonly window: number;
  /** Standard deviation below which the tag counts as flat [SI]; 0 = only identical values. */
  readonly minStd: number;
}

export interface SpikeCheck {
  /** Half-width of the centred window [grid points]; default 5. */
  readonly halfWindow?: number;
  /** Threshold in robust standard deviations; default 3 (Pearson 2002). */
  readonly nSigma?: number;
  /** Smallest deviation ever called a spike [SI], so a flat, quantised signal with MAD = 0 does not
   * flag every step; default 0. */
  readonly minDeviation?: number;
}

export interface TagValidation {
  readonly role: string;
  /** Valid range [SI], inclusive. */
  readonly min?: number;
  readonly max?: number;
  /** A key tag enters steady-state detection and decides point validity; others only get flags. */
  readonly key?: boolean;
  readonly stuck?: StuckCheck;
  readonly spike?: SpikeCheck;
}

/** Per-point verdicts of the machine model (1 = fault), same length as the grid. */
export interface ModelFaults {
  readonly secondLaw?: ArrayLike<number | boolean>;
  readonly impossible?: ArrayLike<number | boolean>;
}

export interface TagValidationResult {
  readonly role: string;
  /** VALID_* bit mask per grid point. */
  readonly flags: Uint16Array;
  /** Number of points carrying each flag. */
  readonly counts: Readonly<Record<ValidationFlagName, number>>;
}

export interface ValidationResult {
  readonly tags: ReadonlyMap<string, TagValidationResult>;
  /** OR of the key tags' flags and the model flags, per point. */
  readonly pointFlags: Uint16Array;
  /** 1 where every key tag is usable and the model raised no fault. */
  readonly valid: Uint8Array;
  /** 1 where any tag (key or not) or the model shows an instrument fault. */
  readonly instrumentFault: Uint8Array;
}

export interface Reason {
  /** The tag, or undefined for a machine-model fault. */
  readonly role: string | undefined;
  readonly flag: ValidationFlagName;
  readonly text: string;
}

/** Names of the flags set in a VALID_* mask. */
export function flagNames(mask: number): ValidationFlagName[] {
  return FLAG_LIST.filter(([bit]) => (mask & bit) !== 0).map(([, name]) => name);
}

/** The reasons for every flag at grid point i, tag by tag, then the model's. */
export function reasonsAt(result: ValidationResult, i: number): Reason[] {
  const out: Reason[] = [];
  for (const tag of result.tags.values()) {
    const mask = tag.flags[i] ?? 0;
    for (const [bit, flag, text] of FLAG_LIST)
      if ((mask & bit) !== 0) out.push({ role: tag.role, flag, text });
  }
  const model = (result.pointFlags[i] ?? 0) & (VALID_SECOND_LAW | VALID_IMPOSSIBLE);
  for (const [bit, flag, text] of FLAG_LIST)
    if ((model & bit) !== 0) out.push({ role: undefined, flag, text });
  return out;
}

/** Validate aligned data. Tags without a config get only the alignment-derived flags. */
export function validateAligned(
  aligned: Aligned,
  configs: readonly TagValidation[],
  modelFaults: ModelFaults = {},
): ValidationResult {
  const n = aligned.t.length;
  const byRole = new Map(configs.map((c) => [c.role, c]));
  for (const c of configs)
    if (!aligned.tags.has(c.role))
      throw new MonitorBadInputError('role', c.role, 'no aligned tag with this role');
  const tags = new Map<string, TagValidationResult>();
  const flagsByRole = new Map<string, Uint16Array>();

  // Pass 1: alignment, range and spike flags; moving-window std for the stuck test.
  const stdByRole = new Map<string, Float64Array>();
  const flatByRole = new Map<string, Uint8Array>();
  for (const role of aligned.roles) {
    const tag = aligned.tags.get(role)!;
    const cfg = byRole.get(role);
    const flags = new Uint16Array(n);
    const x = tag.value;
    const min = cfg?.min ?? Number.NEGATIVE_INFINITY;
    const max = cfg?.max ?? Number.POSITIVE_INFINITY;
    for (let i = 0; i < n; i++) {
      const af = tag.flags[i] as number;
      let f = 0;
      if ((af & A_MISSING) !== 0) f |= VALID_MISSING;
      if ((af & A_STALE) !== 0) f |= VALID_STALE;
      if ((af & A_BAD) !== 0) f |= VALID_BAD_QUALITY;
      const v = x[i] as number;
      if (Number.isFinite(v) && (v < min || v > max)) f |= VALID_RANGE;
      flags[i] = f;
    }
    if (cfg?.spike !== undefined) hampel(x, flags, cfg.spike);
    if (cfg?.stuck !== undefined) {
      const w = cfg.stuck.window;
      if (!(Number.isInteger(w) && w >= 3))
        throw new MonitorBadInputError(`${role}.stuck.window`, w, 'integer >= 3');
      const { std, identical } = movingStd(x, w);
      stdByRole.set(role, std);
      flatByRole.set(role, identical);
    }
    flagsByRole.set(role, flags);
  }

  // Pass 2: stuck = flat while another key tag moves over the same window.
  const keyRoles = configs.filter((c) => c.key === true).map((c) => c.role);
  for (const cfg of configs) {
    if (cfg.stuck === undefined) continue;
    const std = stdByRole.get(cfg.role)!;
    const identical = flatByRole.get(cfg.role)!;
    const others = keyRoles
      .filter((r) => r !== cfg.role && stdByRole.has(r))
      .map((r) => ({
        std: stdByRole.get(r)!,
        flat: flatByRole.get(r)!,
        minStd: byRole.get(r)!.stuck!.minStd,
      }));
    const w = cfg.stuck.window;
    const mark = new Int32Array(n + 1); // difference array: flag the whole window
    for (let i = w - 1; i < n; i++) {
      const s = std[i] as number;
      const flat = identical[i] === 1 || (Number.isFinite(s) && s < cfg.stuck.minStd);
      if (!flat) continue;
      let moving = false;
      for (const o of others) {
        const so = o.std[i] as number;
        // An other tag "moves" when its own spread is above its own flat threshold.
        if (Number.isFinite(so) && so > o.minStd && o.flat[i] === 0) {
          moving = true;
          break;
        }
      }
      if (!moving) continue;
      mark[i - w + 1] = (mark[i - w + 1] as number) + 1;
      mark[i + 1] = (mark[i + 1] as number) - 1;
    }
    const flags = flagsByRole.get(cfg.role)!;
    let run = 0;
    for (let i = 0; i < n; i++) {
      run += mark[i] as number;
      if (run > 0) flags[i] = (flags[i] as number) | VALID_STUCK;
    }
  }

  // Model faults.
  const modelMask = new Uint16Array(n);
  for (const [arr, bit, name] of [
    [modelFaults.secondLaw, VALID_SECOND_LAW, 'secondLaw'],
    [modelFaults.impossible, VALID_IMPOSSIBLE, 'impossible'],
  ] as const) {
    if (arr === undefined) continue;
    if (arr.length !== n) throw new LengthMismatchError(`modelFaults.${name}`, n, arr.length);
    for (let i = 0; i < n; i++) if (arr[i]) modelMask[i] = (modelMask[i] as number) | bit;
  }

  const pointFlags = new Uint16Array(n);
  const valid = new Uint8Array(n);
  const instrumentFault = new Uint8Array(n);
  const keySet = new Set(keyRoles.length > 0 ? keyRoles : aligned.roles);
  const keyFlags = [...flagsByRole].filter(([role]) => keySet.has(role)).map(([, f]) => f);
  const allFlags = [...flagsByRole.values()];
  for (let i = 0; i < n; i++) {
    let key = modelMask[i] as number;
    let instrument = key;
    for (const flags of keyFlags) key |= flags[i] as number;
    for (const flags of allFlags) instrument |= flags[i] as number;
    instrument &= INSTRUMENT_FLAGS;
    pointFlags[i] = key;
    valid[i] = (key & INVALIDATING_FLAGS) === 0 ? 1 : 0;
    instrumentFault[i] = instrument !== 0 ? 1 : 0;
  }
  for (const [role, flags] of flagsByRole) tags.set(role, { role, flags, counts: countFlags(flags) });
  return { tags, pointFlags, valid, instrumentFault };
}

function countFlags(flags: Uint16Array): Record<ValidationFlagName, number> {
  const counts: Record<ValidationFlagName, number> = {
    missing: 0,
    stale: 0,
    'bad-quality': 0,
    range: 0,
    stuck: 0,
    spike: 0,
    'second-law': 0,
    impossible: 0,
  };
  for (let i = 0; i < flags.length; i++) {
    const f = flags[i] as number;
    if (f === 0) continue;
    for (const [bit, name] of FLAG_LIST) if ((f & bit) !== 0) counts[name]++;
  }
  return counts;
}

/**
 * Trailing-window standard deviation (population form, divisor = count of finite values) and an
 * "all identical" marker, for window ending at each index. NaN where the window has fewer than
 * ceil(w/2) finite values or the index is before w - 1. Sums are taken about a fixed shift (the
 * first finite value) so a large offset (1e5 Pa) does not cancel the small spread.
 */
export function movingStd(x: ArrayLike<number>, w: number): { std: Float64Array; identical: Uint8Array } {
  const n = x.length;
  const std = new Float64Array(n).fill(Number.NaN);
  const identical = new Uint8Array(n);
  let shift = 0;
  for (let i = 0; i < n; i++) {
    const v = x[i] as number;
    if (Number.isFinite(v)) {
      shift = v;
      break;
    }
  }
  let s1 = 0;
  let s2 = 0;
  let cnt = 0;
  let sameRun = 0; // length of the run of identical finite values ending at i
  const need = Math.ceil(w / 2);
  for (let i = 0; i < n; i++) {
    const v = x[i] as number;
    if (Number.isFinite(v)) {
      const d = v - shift;
      s1 += d;
      s2 += d * d;
      cnt++;
      const prev = i > 0 ? (x[i - 1] as number) : Number.NaN;
      sameRun = prev === v ? sameRun + 1 : 1;
    } else sameRun = 0;
    if (i >= w) {
      const o = x[i - w] as number;
      if (Number.isFinite(o)) {
        const d = o - shift;
        s1 -= d;
        s2 -= d * d;
        cnt--;
      }
    }
    if (i >= w - 1) {
      if (sameRun >= w) identical[i] = 1;
      if (cnt >= need) {
        const mean = s1 / cnt;
        const variance = s2 / cnt - mean * mean;
        std[i] = variance > 0 ? Math.sqrt(variance) : 0;
      }
    }
  }
  return { std, identical };
}

/**
 * Hampel identifier over a centred window; sets VALID_SPIKE in `flags`. The window is kept sorted
 * as it slides (one insertion, one removal per step), so the median is read off directly and the
 * MAD is the k-th smallest of two already-sorted deviation runs (left and right of the median).
 */
function hampel(x: Float64Array, flags: Uint16Array, cfg: SpikeCheck): void {
  const h = cfg.halfWindow ?? 5;
  const nSigma = cfg.nSigma ?? 3;
  const minDev = cfg.minDeviation ?? 0;
  if (!(Number.isInteger(h) && h >= 1)) throw new MonitorBadInputError('spike.halfWindow', h, 'integer >= 1');
  if (!(nSigma > 0)) throw new MonitorBadInputError('spike.nSigma', nSigma, 'must be positive');
  const n = x.length;
  const win = new Float64Array(2 * h + 1);
  let m = 0;
  const insert = (v: number): void => {
    let j = m - 1;
    while (j >= 0 && (win[j] as number) > v) {
      win[j + 1] = win[j] as number;
      j--;
    }
    win[j + 1] = v;
    m++;
  };
  const remove = (v: number): void => {
    let j = 0;
    while (j < m && win[j] !== v) j++;
    for (; j < m - 1; j++) win[j] = win[j + 1] as number;
    m--;
  };
  for (let j = 0; j <= Math.min(h, n - 1); j++) if (Number.isFinite(x[j] as number)) insert(x[j] as number);
  for (let i = 0; i < n; i++) {
    if (i > 0) {
      // Drop before adding: the buffer holds at most 2h + 1 values.
      const drop = i - h - 1;
      if (drop >= 0 && Number.isFinite(x[drop] as number)) remove(x[drop] as number);
      const add = i + h;
      if (add < n && Number.isFinite(x[add] as number)) insert(x[add] as number);
    }
    const xi = x[i] as number;
    if (!Number.isFinite(xi) || m < 3) continue;
    const k = m >> 1;
    const med = m % 2 === 1 ? (win[k] as number) : ((win[k - 1] as number) + (win[k] as number)) / 2;
    const d = Math.abs(xi - med);
    if (!(d > minDev) || d === 0) continue;
    const mad = kthDeviation(win, m, med, k, m % 2 === 0);
    // 1.4826 = 1/Phi^-1(3/4): MAD to sigma for normal data (Hampel 1974).
    if (d > nSigma * 1.4826 * mad) flags[i] = (flags[i] as number) | VALID_SPIKE;
  }
}

/** Median of |w_j - med| over the sorted w[0..m-1]: merge the two ascending deviation runs. */
function kthDeviation(w: Float64Array, m: number, med: number, k: number, even: boolean): number {
  let r = 0;
  while (r < m && (w[r] as number) < med) r++;
  let l = r - 1; // left run: med - w[l], ascending as l falls
  let prev = 0;
  let cur = 0;
  for (let c = 0; c <= k; c++) {
    const dl = l >= 0 ? med - (w[l] as number) : Number.POSITIVE_INFINITY;
    const dr = r < m ? (w[r] as number) - med : Number.POSITIVE_INFINITY;
    prev = cur;
    if (dl <= dr) {
      cur = dl;
      l--;
    } else {
      cur = dr;
      r++;
    }
  }
  return even ? (prev + cur) / 2 : cur;
}
