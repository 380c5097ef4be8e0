/**
 * Instrument findings as the compute pass applies them. A finding (a gauge/absolute mix-up found
 * over time by the instrument step, see instrument.ts) is stored once; every computation of a
 * machine's rows reads the stored findings and flags the rows they cover, so a recompute keeps
 * the flag and no later pass rewrites a computed row. The per-point check of an absolute pressure
 * at or below zero needs no history and runs on every row.
 */
import { checkAbsolutePressurePlausible } from '@isentrope/monitor';

/** Instrument-fault flags carry this prefix, so they stay apart from notes on the figures. */
export const FAULT_PREFIX = 'fault:';

/** Fault names as they appear in result flags (`fault:<name>:<role>`). */
export const GAUGE_ABSOLUTE_FAULT = 'gauge-absolute';
export const PRESSURE_NOT_POSITIVE_FAULT = 'pressure-not-positive';

export type PressureRole = 'inletPressure' | 'outletPressure';

/** A stored finding's lifecycle (migrations/0005_instrument_findings.sql). */
export type FindingStatus = 'standing' | 'reverted' | 'dismissed';

export interface StoredFinding {
  readonly role: PressureRole;
  /** First result at the new level [ms]. */
  readonly at: number;
  /** First result after the reverting step [ms]; null while standing. */
  readonly endedAt: number | null;
  readonly status: FindingStatus;
}

/** The rows of [fromMs, toMs) get `flag` and valid = false. */
export interface FindingFlag {
  readonly flag: string;
  readonly fromMs: number;
  /** Exclusive; Infinity for a standing finding. */
  readonly toMs: number;
}

export function faultFlag(name: string, role: PressureRole): string {
  return `${FAULT_PREFIX}${name}:${role}`;
}

/**
 * The flag intervals of a machine's stored gauge/absolute findings: a standing one from its step
 * on, a reverted one over [at, ended_at), a dismissed one (a real process change) none.
 */
export function findingFlags(findings: readonly StoredFinding[]): FindingFlag[] {
  const out: FindingFlag[] = [];
  for (const f of findings) {
    const flag = faultFlag(GAUGE_ABSOLUTE_FAULT, f.role);
    if (f.status === 'standing') out.push({ flag, fromMs: f.at, toMs: Number.POSITIVE_INFINITY });
    else if (f.status === 'reverted' && f.endedAt !== null) out.push({ flag, fromMs: f.at, toMs: f.endedAt });
  }
  return out;
}

/** Any ambient will do for the not-positive test, which does not depend on it (ISO 2533 atmosphere). */
const REFERENCE_AMBIENT = 101_325;

function notPositive(p: number | null): boolean {
  if (p === null || !Number.isFinite(p)) return false;
  const check = checkAbsolutePressurePlausible(p, { ambientPressure: REFERENCE_AMBIENT });
  return !check.plausible && check.reason === 'not-positive';
}

/**
 * Adds the instrument-fault flags of one row to `flags`: an absolute pressure at or below zero
 * (a gauge transmitter on an absolute tag, e.g. at an atmospheric inlet), and every finding whose
 * interval holds the row's time. True when any was added: the row is then not valid.
 */
export function addInstrumentFlags(
  timeMs: number,
  pIn: number | null,
  pOut: number | null,
  findings: readonly FindingFlag[],
  flags: string[],
): boolean {
  let added = false;
  if (notPositive(pIn)) {
    flags.push(faultFlag(PRESSURE_NOT_POSITIVE_FAULT, 'inletPressure'));
    added = true;
  }
  if (notPositive(pOut)) {
    flags.push(faultFlag(PRESSURE_NOT_POSITIVE_FAULT, 'outletPressure'));
    added = true;
  }
  for (const f of findings) {
    if (timeMs < f.fromMs || timeMs >= f.toMs || flags.includes(f.flag)) continue;
    flags.push(f.flag);
    added = true;
  }
  return added;
}
