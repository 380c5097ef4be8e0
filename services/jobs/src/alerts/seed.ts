/**
 * Test support (invented data): a site, machines and result rows written straight into the
 * database, so that the analysis and alert tests do not depend on the compute job.
 */
import { gaussian, mulberry32 } from '@isentrope/thermo';
import type pg from 'pg';
import { ensureResultPartitions } from '../queries/results.js';

export interface SeedResult {
  /** [ms] */
  readonly t: number;
  /** [-] */
  readonly efficiency: number;
  /** [-] */
  readonly uEfficiency: number;
  readonly operatingPoint: number;
  readonly steady?: boolean;
  readonly valid?: boolean;
  readonly flags?: readonly string[];
}

export async function seedTestSite(pool: pg.Pool, slug: string): Promise<number> {
  const r = await pool.query<{ id: number }>(
    `INSERT INTO sites (slug, name, time_zone, ambient_pressure, spec) VALUES ($1, $2, 'UTC', '1.01325 bara', '{}') RETURNING id`,
    [slug, `${slug} (invented)`],
  );
  return (r.rows[0] as { id: number }).id;
}

export interface SeedMachineOptions {
  readonly kind?: 'turbine' | 'compressor' | 'pump' | 'fan';
  readonly outOfService?: boolean;
  readonly baselineSpec?: unknown;
  /** Bands row (losses in points, delays in s); omitted = no row (kind defaults). */
  readonly bands?: {
    readonly warning: number;
    readonly alarm: number;
    readonly onDelayS: number;
    readonly offDelayS: number;
    readonly deadband: number;
    readonly minCoverage?: number;
    readonly severity?: string;
    readonly requireBeyondUncertainty?: boolean;
  };
  /** Tag roles to create (name `<slug>.<role>`); returns their ids. */
  readonly roles?: readonly string[];
}

export async function seedTestMachine(
  pool: pg.Pool,
  siteId: number,
  slug: string,
  o: SeedMachineOptions = {},
): Promise<{ id: number; tags: Record<string, number> }> {
  const r = await pool.query<{ id: number }>(
    `INSERT INTO machines (site_id, slug, name, kind, fluid, out_of_service, baseline_spec, spec)
     VALUES ($1, $2, $3, $4, '"air"', $5, $6, '{}') RETURNING id`,
    [
      siteId,
      slug,
      `${slug} (invented)`,
      o.kind ?? 'compressor',
      o.outOfService ?? false,
      o.baselineSpec === undefined ? null : JSON.stringify(o.baselineSpec),
    ],
  );
  const id = (r.rows[0] as { id: number }).id;
  const b = o.bands;
  if (b !== undefined)
    await pool.query(
      `INSERT INTO bands (machine_id, warning, alarm, on_delay_s, off_delay_s, deadband, min_coverage, severity, require_beyond_uncertainty)
       VALUES ($1, $2, $3, $4, $5, $6, $7, $8, $9)`,
      [
        id,
        b.warning,
        b.alarm,
        b.onDelayS,
        b.offDelayS,
        b.deadband,
        b.minCoverage ?? 0.5,
        b.severity ?? 'medium',
        b.requireBeyondUncertainty ?? true,
      ],
    );
  const tags: Record<string, number> = {};
  for (const role of o.roles ?? []) {
    const t = await pool.query<{ id: number }>(
      `INSERT INTO tags (site_id, machine_id, name, role, unit, spec) VALUES ($1, $2, $3, $4, 'bara', '{}') RETURNING id`,
      [siteId, id, `${slug}.${role}`, role],
    );
    tags[role] = (t.rows[0] as { id: number }).id;
  }
  return { id, tags };
}

/** Insert (or replace) result rows of a machine, queued for the analysis job as the compute job queues them. */
export async function seedResults(
  pool: pg.Pool,
  machineId: number,
  rows: readonly SeedResult[],
): Promise<void> {
  if (rows.length === 0) return;
  let lo = Number.POSITIVE_INFINITY;
  let hi = Number.NEGATIVE_INFINITY;
  for (const r of rows) {
    lo = Math.min(lo, r.t);
    hi = Math.max(hi, r.t);
  }
  await ensureResultPartitions(pool, lo, hi);
  for (let k = 0; k < rows.length; k += 5000) {
    const part = rows.slice(k, k + 5000);
    await pool.query(
      `WITH written AS (
       INSERT INTO results (machine_id, time, efficiency, u_efficiency, operating_point, steady, valid, flags, computed_at)
       SELECT $1, to_timestamp(u.t / 1000), u.e, u.ue, u.x, u.s, u.v,
              CASE WHEN u.f = '' THEN '{}'::text[] ELSE string_to_array(u.f, '|') END, clock_timestamp()
         FROM unnest($2::float8[], $3::float8[], $4::float8[], $5::float8[], $6::boolean[], $7::boolean[], $8::text[])
           AS u(t, e, ue, x, s, v, f)
       ON CONFLICT (machine_id, time) DO UPDATE SET efficiency = EXCLUDED.efficiency, u_efficiency = EXCLUDED.u_efficiency,
         operating_point = EXCLUDED.operating_point, steady = EXCLUDED.steady, valid = EXCLUDED.valid, flags = EXCLUDED.flags,
         computed_at = EXCLUDED.computed_at
       RETURNING time)
       INSERT INTO analysis_pending (machine_id, from_time, to_time)
       SELECT $1, min(time), max(time) + interval '1 millisecond' FROM written`,
      [
        machineId,
        part.map((r) => r.t),
        part.map((r) => r.efficiency),
        part.map((r) => r.uEfficiency),
        part.map((r) => r.operatingPoint),
        part.map((r) => r.steady ?? true),
        part.map((r) => r.valid ?? true),
        part.map((r) => (r.flags ?? []).join('|')),
      ],
    );
  }
}

/** Insert an active baseline given by its polynomial coefficients (no fitted model). */
export async function seedBaseline(
  pool: pg.Pool,
  machineId: number,
  coefficients: readonly number[],
  fromMs: number,
  toMs: number,
): Promise<number> {
  const r = await pool.query<{ id: number }>(
    `INSERT INTO baselines (machine_id, operating_point, reference_from, reference_to, coefficients, n, created_by)
     VALUES ($1, 'massFlow', to_timestamp($2::float8 / 1000), to_timestamp($3::float8 / 1000), $4, 100, 'test') RETURNING id::int`,
    [machineId, fromMs, toMs, [...coefficients]],
  );
  return (r.rows[0] as { id: number }).id;
}

/** A seeded uniform generator and normal deviates from it (the thermo package's mulberry32 and Box-Muller). */
export function rng(seed: number): { uniform: () => number; normal: () => number } {
  const uniform = mulberry32(seed);
  return { uniform, normal: gaussian(uniform) };
}
