/**
 * Alert job (each minute, after the analysis job): per machine, in one transaction,
 *  - drift: the band is judged on the 1-hour trailing mean of the drift series over steady, valid,
 *    fault-free results, stepped once per grid step in data time from where the last tick stopped.
 *    One hour (60 points at 1 min) averages transmitter noise down while a real loss still shows
 *    within the hour; the on-delay then asks the loss to persist. The window's uncertainty is
 *    u^2 = (mean per-point u_drift)^2 + s^2/n (packages/monitor/src/rolling.ts) and its coverage the
 *    share of the hour's grid points used; the band asks |drift| > k u with k = 2 (expanded
 *    uncertainty, about 95 %) when the plant sets requireBeyondUncertainty.
 *  - instrument faults: per tag role, a band on "a fault flag is present" with the same delays,
 *    kept apart (category 'instrument', tag_id set). A faulty point is not valid, so it never feeds
 *    the drift windows: a stuck transmitter raises an instrument alert and no drift alert.
 *  - a tick of the clock for every open alert (shelve expiry on time).
 * Each activation says since when its condition has held (./condition-since.ts) beside when it was
 * raised: an alert raised on history, on a first start or after a stop, meets a condition that
 * began long before the span the band judges.
 * Out-of-service machines raise nothing: their band states are reset and skipped forward.
 * Band states (delays pending) live in alert_band_state; the alert states are read from the
 * alerts table each tick, so operators' acknowledgements and shelves (API) are respected.
 */
import {
  type AlertEvent,
  type BandState,
  bandToAlertEvent,
  INITIAL_BAND_STATE,
  rollingWindows,
  type Severity,
  stepBand,
} from '@isentrope/monitor';
import { inTransaction } from '@isentrope/store';
import type pg from 'pg';
import { readActiveBaseline } from '../analysis/baseline.js';
import {
  bandOnsetMs,
  type ConditionSince,
  driftConditionSince,
  instrumentConditionSince,
} from './condition-since.js';
import {
  bandsFor,
  driftBandConfig,
  EXPANDED_K,
  faultBandConfig,
  faultsByKey,
  type MachineBands,
} from './config.js';
import {
  type AlertTarget,
  applyAlertEvent,
  type ConditionContext,
  lockOpenAlerts,
  type OpenAlertRow,
} from './store.js';
import { isoSeconds } from './times.js';

export interface AlertsOptions {
  /** Tick time [ms] (the clock for shelve expiry). */
  readonly nowMs: number;
  readonly machineIds?: readonly number[];
  /** Grid step of the results [ms]; default 60 000. */
  readonly stepMs?: number;
  /** Drift window [ms]; default 1 h (see the module comment). */
  readonly driftWindowMs?: number;
  /** How far back a machine seen for the first time (or after a long stop of the jobs) is judged [ms]; default 24 h. */
  readonly maxCatchUpMs?: number;
  /** Fewest usable results for a day's mean drift to count in the condition-since search; default 60 (as the analysis job's rate). */
  readonly minPointsPerDay?: number;
}

export interface AlertsRunStats {
  readonly machines: number;
  readonly samples: number;
  readonly transitions: number;
}

interface MachineDb {
  id: number;
  slug: string;
  name: string;
  kind: string;
  out_of_service: boolean;
}

interface BandRow {
  alert_key: string;
  severity: Severity;
  pending_severity: Severity | null;
  pending_since_ms: number | null;
  evaluated_to_ms: number | null;
}

interface KeyState {
  band: BandState;
  evaluatedTo: number | null;
  last?: { value: number; u: number; coverage: number };
  dirty: boolean;
}

const iso = isoSeconds;

/** The evidence fields and the words of the message that date a condition. */
function conditionEvidence(
  since: ConditionSince,
  raisedMs: number,
): {
  ms: number;
  fields: { conditionSince: string; conditionSinceBasis: string; raisedAt: string };
  text: string;
} {
  return {
    ms: since.ms,
    fields: { conditionSince: iso(since.ms), conditionSinceBasis: since.basis, raisedAt: iso(raisedMs) },
    text: `condition since ${iso(since.ms)}, raised ${iso(raisedMs)}`,
  };
}

export function trendLink(slug: string, fromMs: number, toMs: number): string {
  return `/machines/${encodeURIComponent(slug)}?from=${encodeURIComponent(iso(fromMs))}&to=${encodeURIComponent(iso(toMs))}`;
}

async function loadBandStates(client: pg.PoolClient, machineId: number): Promise<Map<string, KeyState>> {
  const res = await client.query<BandRow>(
    `SELECT alert_key, severity, pending_severity,
            (extract(epoch FROM pending_since) * 1000)::float8 AS pending_since_ms,
            (extract(epoch FROM evaluated_to) * 1000)::float8 AS evaluated_to_ms
       FROM alert_band_state WHERE machine_id = $1 FOR UPDATE`,
    [machineId],
  );
  const out = new Map<string, KeyState>();
  for (const r of res.rows)
    out.set(r.alert_key, {
      band:
        r.pending_severity !== null && r.pending_since_ms !== null
          ? { severity: r.severity, pending: { severity: r.pending_severity, sinceMs: r.pending_since_ms } }
          : { severity: r.severity },
      evaluatedTo: r.evaluated_to_ms,
      dirty: false,
    });
  return out;
}

async function saveBandStates(
  client: pg.PoolClient,
  machineId: number,
  states: Map<string, KeyState>,
): Promise<void> {
  for (const [key, s] of states) {
    if (!s.dirty) continue;
    await client.query(
      `INSERT INTO alert_band_state (machine_id, alert_key, severity, pending_severity, pending_since, evaluated_to,
                                     last_value, last_u, last_coverage, updated_at)
       VALUES ($1, $2, $3, $4, $5, $6, $7, $8, $9, now())
       ON CONFLICT (machine_id, alert_key) DO UPDATE SET severity = EXCLUDED.severity,
         pending_severity = EXCLUDED.pending_severity, pending_since = EXCLUDED.pending_since,
         evaluated_to = EXCLUDED.evaluated_to, last_value = coalesce(EXCLUDED.last_value, alert_band_state.last_value),
         last_u = coalesce(EXCLUDED.last_u, alert_band_state.last_u),
         last_coverage = coalesce(EXCLUDED.last_coverage, alert_band_state.last_coverage), updated_at = now()`,
      [
        machineId,
        key,
        s.band.severity,
        s.band.pending?.severity ?? null,
        s.band.pending === undefined ? null : new Date(s.band.pending.sinceMs),
        s.evaluatedTo === null ? null : new Date(s.evaluatedTo),
        s.last !== undefined && Number.isFinite(s.last.value) ? s.last.value : null,
        s.last !== undefined && Number.isFinite(s.last.u) ? s.last.u : null,
        s.last !== undefined && Number.isFinite(s.last.coverage) ? s.last.coverage : null,
      ],
    );
  }
}

interface RowDb {
  t: number;
  drift: number | null;
  u_drift: number | null;
  operating_point: number | null;
  usable: boolean;
  flags: string[];
}

class MachineAlerts {
  transitions = 0;
  samples = 0;
  private readonly open = new Map<string, OpenAlertRow>();

  constructor(
    private readonly client: pg.PoolClient,
    private readonly m: MachineDb,
    private readonly bands: MachineBands,
    private readonly tagByRole: Map<string, number>,
    openRows: readonly OpenAlertRow[],
  ) {
    for (const r of openRows) this.open.set(this.keyOf(r), r);
  }

  private keyOf(r: OpenAlertRow): string {
    if (r.category === 'drift') return 'drift';
    for (const [role, id] of this.tagByRole) if (id === r.tag_id) return `instrument:${role}`;
    return r.tag_id === null ? 'instrument:machine' : `instrument:tag-${r.tag_id}`;
  }

  private target(key: string): AlertTarget {
    const role = key.startsWith('instrument:') ? key.slice('instrument:'.length) : undefined;
    return {
      machineId: this.m.id,
      category: key === 'drift' ? 'drift' : 'instrument',
      tagId: role === undefined ? null : (this.tagByRole.get(role) ?? null),
      severity: this.bands.severity,
    };
  }

  async apply(key: string, event: AlertEvent, at: number, ctx?: ConditionContext): Promise<void> {
    const r = await applyAlertEvent(this.client, this.target(key), this.open.get(key), event, at, ctx);
    this.transitions += r.transitions;
    if (r.open === undefined) this.open.delete(key);
    else this.open.set(key, r.open);
  }

  async tickAll(nowMs: number): Promise<void> {
    for (const key of [...this.open.keys()]) await this.apply(key, { type: 'tick' }, nowMs);
  }
}

async function machineRows(
  client: pg.PoolClient,
  machineId: number,
  fromMs: number,
  toMs: number,
): Promise<RowDb[]> {
  const res = await client.query<RowDb>(
    `SELECT (extract(epoch FROM time) * 1000)::float8 AS t, drift, u_drift, operating_point, flags,
            (steady AND valid AND drift IS NOT NULL
             AND NOT EXISTS (SELECT 1 FROM unnest(flags) AS f(flag) WHERE f.flag LIKE 'fault:%')) AS usable
       FROM results WHERE machine_id = $1 AND time >= to_timestamp($2::float8 / 1000) AND time < to_timestamp($3::float8 / 1000)
      ORDER BY time`,
    [machineId, fromMs, toMs],
  );
  return res.rows;
}

type ResolvedOptions = Required<Omit<AlertsOptions, 'machineIds'>>;

/** One machine's tick: its band states, its open alerts, and the steps they take. */
interface MachineTick {
  readonly client: pg.PoolClient;
  readonly m: MachineDb;
  readonly bands: MachineBands;
  readonly tagByRole: Map<string, number>;
  readonly ma: MachineAlerts;
  readonly states: Map<string, KeyState>;
  readonly o: ResolvedOptions;
}

function stateOf(states: Map<string, KeyState>, key: string): KeyState {
  let s = states.get(key);
  if (s === undefined) {
    s = { band: INITIAL_BAND_STATE, evaluatedTo: null, dirty: true };
    states.set(key, s);
  }
  return s;
}

/** Evidence and message of a drift band step (the caution is added when stored). */
async function driftStepContext(
  tick: MachineTick,
  baseline: { id: number; operatingPoint: string },
  w: { efficiency: number; uEfficiency: number; coverage: number; n: number; operatingPoint: number },
  step: ReturnType<typeof stepBand>,
  before: BandState,
  end: number,
): Promise<ConditionContext> {
  const { client, m, bands, o } = tick;
  const from = end - o.driftWindowMs;
  const level = step.to === 'alarm' ? -bands.alarm : -bands.warning;
  const since =
    step.to === 'normal'
      ? undefined
      : conditionEvidence(
          await driftConditionSince(
            client,
            m.id,
            level,
            bandOnsetMs(before, step.to, end),
            o.minPointsPerDay,
          ),
          end,
        );
  const evidence = {
    driftPts: w.efficiency,
    uDriftPts: w.uEfficiency,
    k: EXPANDED_K,
    expandedUDriftPts: EXPANDED_K * w.uEfficiency,
    coverage: w.coverage,
    points: w.n,
    operatingPoint: Number.isFinite(w.operatingPoint) ? w.operatingPoint : null,
    baselineOperatingPoint: baseline.operatingPoint,
    window: { from: iso(from), to: iso(end) },
    link: trendLink(m.slug, from, end),
    baselineId: baseline.id,
    band: {
      warningPts: -bands.warning,
      alarmPts: -bands.alarm,
      deadbandPts: bands.deadband,
      onDelayS: bands.onDelayS,
      offDelayS: bands.offDelayS,
      minCoverage: bands.minCoverage,
      source: bands.source,
    },
    reason: step.reason,
    ...since?.fields,
  };
  const message =
    since === undefined
      ? `${m.name}: efficiency drift back inside the band: ${w.efficiency.toFixed(2)} points over the hour to ${iso(end)}.`
      : `${m.name}: efficiency drift ${w.efficiency.toFixed(2)} ± ${(EXPANDED_K * w.uEfficiency).toFixed(2)} points (k = ${EXPANDED_K}) over the hour to ${iso(end)}, beyond the ${step.to} level of ${level} points; ${since.text}.`;
  return { evidence, message, conditionSinceMs: since?.ms };
}

/** Drift on the 1-hour trailing window, one sample per grid step from where the band stopped. */
async function judgeDrift(tick: MachineTick, asOf: number, earliest: number): Promise<void> {
  const { client, m, bands, ma, o } = tick;
  const baseline = await readActiveBaseline(client, m.id);
  const ds = stateOf(tick.states, 'drift');
  if (baseline === undefined) {
    // No baseline yet: no drift to judge; keep the band where it is and the clock moving.
    ds.evaluatedTo = asOf;
    ds.dirty = true;
    return;
  }
  const firstEnd = Math.max(ds.evaluatedTo ?? earliest, earliest) + o.stepMs;
  if (firstEnd > asOf) return;
  const rows = await machineRows(client, m.id, firstEnd - o.driftWindowMs, asOf);
  const input = {
    t: rows.map((r) => r.t),
    efficiency: rows.map((r) => r.drift ?? Number.NaN),
    uSys: rows.map((r) => r.u_drift ?? Number.NaN),
    operatingPoint: rows.map((r) => r.operating_point ?? Number.NaN),
    use: rows.map((r) => (r.usable ? 1 : 0)),
  };
  const config = driftBandConfig(bands);
  for (let end = firstEnd; end <= asOf; end += o.stepMs) {
    const w = rollingWindows(input, end, o.stepMs, [o.driftWindowMs])[0];
    if (w === undefined) continue;
    const before = ds.band;
    const step = stepBand(
      before,
      { t: end, value: w.efficiency, u: w.uEfficiency, coverage: w.coverage },
      config,
    );
    ma.samples++;
    ds.band = step.state;
    ds.evaluatedTo = end;
    ds.last = { value: w.efficiency, u: w.uEfficiency, coverage: w.coverage };
    ds.dirty = true;
    const event = bandToAlertEvent(step.from, step.to, step.reason);
    if (event === undefined) continue;
    await ma.apply('drift', event, end, await driftStepContext(tick, baseline, w, step, before, end));
  }
}

/** Evidence, message and event of an instrument band change. */
async function instrumentStepContext(
  tick: MachineTick,
  key: string,
  names: string[] | undefined,
  step: ReturnType<typeof stepBand>,
  before: BandState,
  t: number,
): Promise<{ event: AlertEvent; ctx: ConditionContext }> {
  const { client, m, bands, o } = tick;
  const role = key.slice('instrument:'.length);
  const from = t - (step.to === 'normal' ? bands.offDelayS : bands.onDelayS) * 1000;
  const since =
    step.to === 'normal'
      ? undefined
      : conditionEvidence(
          await instrumentConditionSince(client, m.id, key, bandOnsetMs(before, step.to, t), t),
          t,
        );
  const evidence = {
    faults: names ?? [],
    role,
    tagId: tick.tagByRole.get(role) ?? null,
    window: { from: iso(from), to: iso(t + o.stepMs) },
    link: trendLink(m.slug, from, t + o.stepMs),
    onDelayS: bands.onDelayS,
    offDelayS: bands.offDelayS,
    reason: step.reason,
    ...since?.fields,
  };
  const what = role === 'machine' ? 'the machine' : `tag role ${role}`;
  const event: AlertEvent =
    step.to === 'normal'
      ? { type: 'clear', reason: `instrument fault gone for the off-delay: ${step.reason}` }
      : {
          type: 'activate',
          severity: 'warning',
          reason: `instrument fault held for the on-delay: ${step.reason}`,
        };
  const message =
    since === undefined
      ? `${m.name}: instrument fault on ${what} has cleared.`
      : `${m.name}: instrument fault on ${what} (${(names ?? []).join(', ')}); ${since.text}; figures resting on it are excluded, this is not an efficiency alert.`;
  return { event, ctx: { evidence, message, conditionSinceMs: since?.ms } };
}

/** Instrument faults, one band per tag role (and one for the machine as a whole), row by row. */
async function judgeInstruments(
  tick: MachineTick,
  asOf: number,
  earliest: number,
  scannedTo: number | null,
): Promise<void> {
  const { client, m, bands, ma, states } = tick;
  const instrKeys = [...states.keys()].filter((k) => k.startsWith('instrument:'));
  let instrFrom = earliest;
  for (const k of instrKeys)
    instrFrom = Math.min(instrFrom, Math.max(states.get(k)?.evaluatedTo ?? earliest, earliest));
  // With no instrument band yet, the rows the drift pass had not seen are the new ones.
  const startFrom = instrKeys.length === 0 ? Math.max(scannedTo ?? earliest, earliest) : instrFrom;
  const rows = await machineRows(client, m.id, startFrom, asOf);
  const fconfig = faultBandConfig(bands);
  for (const r of rows) {
    const faults = faultsByKey(r.flags);
    for (const key of faults.keys()) stateOf(states, key);
    for (const [key, s] of states) {
      if (!key.startsWith('instrument:')) continue;
      if (s.evaluatedTo !== null && r.t <= s.evaluatedTo) continue;
      const names = faults.get(key);
      const before = s.band;
      const step = stepBand(before, { t: r.t, value: names === undefined ? 0 : 1 }, fconfig);
      s.band = step.state;
      s.evaluatedTo = r.t;
      s.last = { value: names === undefined ? 0 : 1, u: 0, coverage: 1 };
      s.dirty = true;
      if (!step.changed) continue;
      const { event, ctx } = await instrumentStepContext(tick, key, names, step, before, r.t);
      await ma.apply(key, event, r.t, ctx);
    }
  }
}

async function newestResultMs(client: pg.PoolClient, machineId: number): Promise<number | null> {
  const newest = await client.query<{ t: number | null }>(
    `SELECT (extract(epoch FROM max(time)) * 1000)::float8 AS t FROM results WHERE machine_id = $1`,
    [machineId],
  );
  return newest.rows[0]?.t ?? null;
}

async function openTick(client: pg.PoolClient, m: MachineDb, o: ResolvedOptions): Promise<MachineTick> {
  const bands = await bandsFor(client, m.id, m.kind);
  const tags = await client.query<{ id: number; role: string }>(
    `SELECT id, role FROM tags WHERE machine_id = $1 AND retired_at IS NULL`,
    [m.id],
  );
  const tagByRole = new Map(tags.rows.map((t) => [t.role, t.id]));
  const ma = new MachineAlerts(client, m, bands, tagByRole, await lockOpenAlerts(client, m.id));
  return { client, m, bands, tagByRole, ma, states: await loadBandStates(client, m.id), o };
}

async function alertsForMachine(
  pool: pg.Pool,
  m: MachineDb,
  o: ResolvedOptions,
): Promise<{ samples: number; transitions: number }> {
  return inTransaction(pool, async (client) => {
    const tick = await openTick(client, m, o);
    const last = await newestResultMs(client, m.id);
    const asOf = last === null ? null : last + o.stepMs;
    if (asOf !== null && m.out_of_service) {
      // Out of service: nothing is judged; the bands restart from normal when it returns.
      for (const s of [stateOf(tick.states, 'drift'), ...tick.states.values()]) {
        s.band = INITIAL_BAND_STATE;
        s.evaluatedTo = asOf;
        s.dirty = true;
      }
    } else if (asOf !== null) {
      const earliest = asOf - o.maxCatchUpMs;
      const scannedTo = stateOf(tick.states, 'drift').evaluatedTo;
      await judgeDrift(tick, asOf, earliest);
      await judgeInstruments(tick, asOf, earliest, scannedTo);
    }
    await tick.ma.tickAll(o.nowMs);
    await saveBandStates(client, m.id, tick.states);
    await client.query(`UPDATE machine_status SET band_severity = $2 WHERE machine_id = $1`, [
      m.id,
      tick.states.get('drift')?.band.severity ?? 'normal',
    ]);
    return { samples: tick.ma.samples, transitions: tick.ma.transitions };
  });
}

/** One alert pass over every machine not retired (or the given ones). */
export async function runAlertsOnce(pool: pg.Pool, options: AlertsOptions): Promise<AlertsRunStats> {
  const o = {
    nowMs: options.nowMs,
    stepMs: options.stepMs ?? 60_000,
    driftWindowMs: options.driftWindowMs ?? 3_600_000,
    maxCatchUpMs: options.maxCatchUpMs ?? 86_400_000,
    minPointsPerDay: options.minPointsPerDay ?? 60,
  };
  const res = await pool.query<MachineDb>(
    `SELECT id, slug, name, kind, out_of_service FROM machines
      WHERE retired_at IS NULL AND ($1::int[] IS NULL OR id = ANY($1::int[])) ORDER BY id`,
    [options.machineIds === undefined ? null : [...options.machineIds]],
  );
  let samples = 0;
  let transitions = 0;
  for (const m of res.rows) {
    const r = await alertsForMachine(pool, m, o);
    samples += r.samples;
    transitions += r.transitions;
  }
  return { machines: res.rows.length, samples, transitions };
}
