import type pg from 'pg';
import { withoutJit } from './nojit.js';

/** Window of the "current" figures, ending at the machine's newest result [ms]: one hour (common practice, no source). */
export const CURRENT_WINDOW_MS = 3_600_000;
/** Window of the data-health figures, ending now [ms]. */
export const HEALTH_WINDOW_MS = 86_400_000;

export interface FleetRow {
  id: number;
  site_slug: string;
  slug: string;
  name: string;
  kind: 'turbine' | 'compressor' | 'pump' | 'fan';
  out_of_service: boolean;
  retired_at: Date | null;
  last_time: Date | null;
  last_valid_time: Date | null;
  eff: number | null;
  u_eff: number | null;
  n_current: number;
  x: number | null;
  power: number | null;
  baseline: number | null;
  drift: number | null;
  n_health: number;
  n_health_valid: number;
  last_flags: string[] | null;
  warning: number | null;
  alarm: number | null;
  /** The drift band's severity as the alert job last stepped it (packages/monitor stepBand), null before its first pass. */
  band_severity: 'normal' | 'warning' | 'alarm' | null;
  open_alerts: number;
  open_drift: number;
  open_instrument: number;
  baseline_id: number | null;
}

/**
 * One row per machine for the fleet page: the means over the hour before its newest valid result
 * of the stored figures (efficiency, and the baseline efficiency and drift the analysis job wrote
 * onto each row), the drift band's severity the alert job stored (machine_status), data health
 * over the last day, open alerts (drift and instrument apart) and bands. Nothing is derived
 * again here. One statement, one round trip.
 */
export async function fleetRows(pool: pg.Pool, nowMs: number): Promise<FleetRow[]> {
  const { rows } = await withoutJit(pool, (client) =>
    client.query<FleetRow>(
      `SELECT m.id, s.slug AS site_slug, m.slug, m.name, m.kind, m.out_of_service, m.retired_at,
            lr.time AS last_time, lv.time AS last_valid_time,
            cur.eff, cur.u_eff, coalesce(cur.n, 0) AS n_current, cur.x, cur.power, cur.baseline, cur.drift,
            coalesce(h.n, 0) AS n_health, coalesce(h.n_valid, 0) AS n_health_valid, lr.flags AS last_flags,
            bd.warning, bd.alarm, ms.band_severity,
            oa.n AS open_alerts, oa.drift AS open_drift, oa.instrument AS open_instrument,
            b.id::int AS baseline_id
       FROM machines m
       JOIN sites s ON s.id = m.site_id
       LEFT JOIN baselines b ON b.machine_id = m.id AND b.active
       LEFT JOIN bands bd ON bd.machine_id = m.id
       LEFT JOIN machine_status ms ON ms.machine_id = m.id
       CROSS JOIN LATERAL (
         SELECT count(*)::int AS n,
                count(*) FILTER (WHERE a.category = 'drift')::int AS drift,
                count(*) FILTER (WHERE a.category = 'instrument')::int AS instrument
           FROM alerts a WHERE a.machine_id = m.id AND a.state <> 'normal'
       ) oa
       LEFT JOIN LATERAL (SELECT time, flags FROM results r WHERE r.machine_id = m.id ORDER BY time DESC LIMIT 1) lr ON true
       LEFT JOIN LATERAL (SELECT time FROM results r WHERE r.machine_id = m.id AND r.valid ORDER BY time DESC LIMIT 1) lv ON true
       LEFT JOIN LATERAL (
         SELECT avg(r.efficiency) AS eff,
                sqrt(avg(r.u_efficiency * r.u_efficiency)) AS u_eff,
                count(r.efficiency)::int AS n,
                avg(r.operating_point) AS x,
                avg(r.power) AS power,
                avg(r.baseline_efficiency) AS baseline,
                avg(r.drift) AS drift
           FROM results r
          WHERE r.machine_id = m.id AND r.valid AND lv.time IS NOT NULL
            AND r.time > lv.time - make_interval(secs => $1::float8 / 1000) AND r.time <= lv.time
       ) cur ON true
       LEFT JOIN LATERAL (
         SELECT count(*)::int AS n, count(*) FILTER (WHERE r.valid)::int AS n_valid
           FROM results r WHERE r.machine_id = m.id AND r.time > to_timestamp($2::float8 / 1000) - make_interval(secs => $3::float8 / 1000)
       ) h ON true
      ORDER BY s.slug, m.slug`,
      [CURRENT_WINDOW_MS, nowMs, HEALTH_WINDOW_MS],
    ),
  );
  return rows;
}
