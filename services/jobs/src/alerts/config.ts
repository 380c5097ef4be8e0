/**
 * Alert configuration: the machine's drift bands (bands table, written from the plant file; else
 * defaults per machine kind) as a monitor BandConfig, and the instrument-fault flags of a result.
 */
import type { BandConfig } from '@isentrope/monitor';
import type { Queryable } from '@isentrope/store';

export type AlertSeverityColumn = 'low' | 'medium' | 'high' | 'urgent';

/** Bands as stored (migrations/0001): warning and alarm are losses [%-points], positive. */
export interface MachineBands {
  readonly warning: number;
  readonly alarm: number;
  /** [s] */
  readonly onDelayS: number;
  /** [s] */
  readonly offDelayS: number;
  /** [%-points] */
  readonly deadband: number;
  /** 0..1 */
  readonly minCoverage: number;
  readonly severity: AlertSeverityColumn;
  readonly requireBeyondUncertainty: boolean;
  /** Where the figures come from. */
  readonly source: 'bands' | 'default';
}

/**
 * Defaults when the plant file sets no bands (common practice, no source): a warning at 2 points
 * and an alarm at 4 points of lost efficiency for turbines and compressors, whose efficiency is
 * measured to well under a point; 3 and 6 for pumps and fans, whose temperature-rise and flow
 * measurements are coarser. 15 min on- and off-delay and 0.5 point deadband as in the plant
 * schema's defaults (packages/plant/src/schema.ts).
 */
export const DEFAULT_BANDS: Readonly<Record<string, MachineBands>> = {
  turbine: band(2, 4),
  compressor: band(2, 4),
  pump: band(3, 6),
  fan: band(3, 6),
};

function band(warning: number, alarm: number): MachineBands {
  return {
    warning,
    alarm,
    onDelayS: 900,
    offDelayS: 900,
    deadband: 0.5,
    minCoverage: 0.5,
    severity: 'medium',
    requireBeyondUncertainty: true,
    source: 'default',
  };
}

export async function bandsFor(db: Queryable, machineId: number, kind: string): Promise<MachineBands> {
  const res = await db.query<{
    warning: number;
    alarm: number;
    on_delay_s: number;
    off_delay_s: number;
    deadband: number;
    min_coverage: number;
    severity: AlertSeverityColumn;
    require_beyond_uncertainty: boolean;
  }>(
    `SELECT warning, alarm, on_delay_s, off_delay_s, deadband, min_coverage, severity, require_beyond_uncertainty
       FROM bands WHERE machine_id = $1`,
    [machineId],
  );
  const r = res.rows[0];
  if (r === undefined) return DEFAULT_BANDS[kind] ?? band(2, 4);
  return {
    warning: r.warning,
    alarm: r.alarm,
    onDelayS: r.on_delay_s,
    offDelayS: r.off_delay_s,
    deadband: r.deadband,
    minCoverage: r.min_coverage,
    severity: r.severity,
    requireBeyondUncertainty: r.require_beyond_uncertainty,
    source: 'bands',
  };
}

/**
 * Coverage factor of the uncertainty test: k = 2, an expanded uncertainty at about 95 % for a
 * normal distribution (GUM, JCGM 100:2008, 6.2 and 6.3). k = 0 turns the test off.
 */
export const EXPANDED_K = 2;

/**
 * The drift band for stepBand: drift [%-points] is bad below -warning / -alarm; the test
 * |drift| > k u_drift (k = 2) applies when the plant asks for it (requireBeyondUncertainty).
 */
export function driftBandConfig(b: MachineBands): BandConfig {
  return {
    direction: 'low',
    warning: -b.warning,
    alarm: -b.alarm,
    deadband: b.deadband,
    onDelayMs: b.onDelayS * 1000,
    offDelayMs: b.offDelayS * 1000,
    minCoverage: b.minCoverage,
    k: b.requireBeyondUncertainty ? EXPANDED_K : 0,
    uncertaintyTest: 'from-zero',
  };
}

/**
 * The band of an instrument fault: the value is 1 while a fault flag is present on a result and 0
 * when not; the alert is raised when it has held over the on-delay and clears when gone over the
 * off-delay (no uncertainty test, no coverage test: each result is judged on its own flags).
 */
export function faultBandConfig(b: MachineBands): BandConfig {
  return {
    direction: 'high',
    alarm: 0.5,
    onDelayMs: b.onDelayS * 1000,
    offDelayMs: b.offDelayS * 1000,
    minCoverage: 0,
    k: 0,
    uncertaintyTest: 'beyond-level',
  };
}

/** Key of the machine-wide instrument alert (a fault named without a tag role). */
export const MACHINE_FAULT_KEY = 'instrument:machine';

/**
 * Instrument faults on a result's flags, grouped by the alert they belong to: 'instrument:<role>'
 * for `fault:<name>:<role>` (e.g. fault:stuck:outletPressure), MACHINE_FAULT_KEY for a fault of the
 * machine as a whole (`fault:<name>` or `fault:<name>:machine`). Values: the fault names.
 */
export function faultsByKey(flags: readonly string[]): Map<string, string[]> {
  const out = new Map<string, string[]>();
  for (const f of flags) {
    if (!f.startsWith('fault:')) continue;
    const rest = f.slice('fault:'.length);
    const colon = rest.indexOf(':');
    const name = colon < 0 ? rest : rest.slice(0, colon);
    const role = colon < 0 ? 'machine' : rest.slice(colon + 1);
    const key = role === 'machine' || role === '' ? MACHINE_FAULT_KEY : `instrument:${role}`;
    const list = out.get(key);
    if (list === undefined) out.set(key, [name]);
    else if (!list.includes(name)) list.push(name);
  }
  return out;
}
