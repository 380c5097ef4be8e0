/**
 * Seeding helpers for the API's database tests and the benchmark: plain SQL inserts of an
 * invented plant (demo data, invented), users, tokens, baselines, bands, results and alerts.
 */
import { runAnalysisOnce } from '@isentrope/jobs';
import { ensurePartitions } from '@isentrope/store';
import { dryAir, evaluateMachine, type MachineResult, water } from '@isentrope/thermo';
import type pg from 'pg';
import { newSecret, sha256Hex, TOKEN_PREFIX } from '../auth/credentials.js';
import { hashPassword } from '../auth/passwords.js';
import type { Role } from '../auth/roles.js';

export interface SeededPlant {
  siteId: number;
  turbineId: number;
  compressorId: number;
  tagIds: number[];
}

/** An invented site with a steam turbine and an air compressor (invented demo data). */
export async function seedPlant(pool: pg.Pool): Promise<SeededPlant> {
  const site = await pool.query<{ id: number }>(
    `INSERT INTO sites (slug, name, time_zone, ambient_pressure, spec) VALUES ('demo', 'Invented demo works', 'UTC', '1.013 bara', '{}') RETURNING id`,
  );
  const siteId = site.rows[0]!.id;
  const m = await pool.query<{ id: number }>(
    `INSERT INTO machines (site_id, slug, name, kind, fluid, spec) VALUES
       ($1, 'st1', 'Steam turbine ST1 (invented)', 'turbine', '"water"', '{}'),
       ($1, 'ac1', 'Air compressor AC1 (invented)', 'compressor', '"air"', '{}')
     RETURNING id`,
    [siteId],
  );
  const turbineId = m.rows[0]!.id;
  const compressorId = m.rows[1]!.id;
  const t = await pool.query<{ id: number }>(
    `INSERT INTO tags (site_id, machine_id, name, role, unit, spec) VALUES
       ($1, $2, 'ST1.PI-100', 'inletPressure', 'bar', '{}'),
       ($1, $2, 'ST1.TI-100', 'inletTemperature', 'degC', '{}'),
       ($1, $3, 'AC1.PI-200', 'outletPressure', 'barg', '{}')
     RETURNING id`,
    [siteId, turbineId, compressorId],
  );
  return { siteId, turbineId, compressorId, tagIds: t.rows.map((r) => r.id) };
}

export async function createUser(
  pool: pg.Pool,
  username: string,
  role: Role,
  password: string,
): Promise<number> {
  const { rows } = await pool.query<{ id: number }>(
    `INSERT INTO users (username, password_hash, role) VALUES ($1, $2, $3) RETURNING id`,
    [username, await hashPassword(password), role],
  );
  return rows[0]!.id;
}

/** An API token for a user; returns the secret. */
export async function createToken(pool: pg.Pool, userId: number, name = 'test'): Promise<string> {
  const secret = newSecret(TOKEN_PREFIX);
  await pool.query(`INSERT INTO api_tokens (user_id, name, token_hash, prefix) VALUES ($1, $2, $3, $4)`, [
    userId,
    name,
    sha256Hex(secret),
    secret.slice(0, 10),
  ]);
  return secret;
}

/** Users viewer1, engineer1 and admin1 (password '<role>-password-1'), each with an API token. */
export async function createRoleTokens(
  pool: pg.Pool,
): Promise<Record<'viewer' | 'engineer' | 'admin', string>> {
  const tokens = { viewer: '', engineer: '', admin: '' };
  for (const role of ['viewer', 'engineer', 'admin'] as const)
    tokens[role] = await createToken(pool, await createUser(pool, `${role}1`, role, `${role}-password-1`));
  return tokens;
}

export async function setBands(
  pool: pg.Pool,
  machineId: number,
  warning: number,
  alarm: number,
): Promise<void> {
  await pool.query(
    `INSERT INTO bands (machine_id, warning, alarm, on_delay_s, off_delay_s, deadband, min_coverage, severity, require_beyond_uncertainty)
     VALUES ($1, $2, $3, 0, 0, 0, 0.5, 'high', true)`,
    [machineId, warning, alarm],
  );
}

/** An active polynomial baseline eta(x) = sum c_k x^k. */
export async function setBaseline(
  pool: pg.Pool,
  machineId: number,
  coefficients: readonly number[],
  xMin: number,
  xMax: number,
): Promise<number> {
  const { rows } = await pool.query<{ id: string }>(
    `INSERT INTO baselines (machine_id, operating_point, reference_from, reference_to, coefficients, x_min, x_max, n, created_by)
     VALUES ($1, 'load', '2025-01-01', '2025-02-01', $2, $3, $4, 100, 'seed') RETURNING id`,
    [machineId, coefficients, xMin, xMax],
  );
  return Number(rows[0]!.id);
}

export interface SeedResult {
  t: number;
  efficiency: number | null;
  uEfficiency?: number;
  operatingPoint?: number;
  power?: number;
  specificWork?: number;
  valid?: boolean;
  steady?: boolean;
}

/** Bulk insert of results by unnest (partitions made first). */
export async function insertResults(
  pool: pg.Pool,
  machineId: number,
  rows: readonly SeedResult[],
): Promise<void> {
  if (rows.length === 0) return;
  const ts = rows.map((r) => r.t);
  await ensurePartitions(pool, 'results', Math.min(...ts), Math.max(...ts));
  for (let i = 0; i < rows.length; i += 20_000) {
    const chunk = rows.slice(i, i + 20_000);
    await pool.query(
      `INSERT INTO results (machine_id, time, efficiency, u_efficiency, operating_point, power, specific_work, valid, steady)
       SELECT $1, to_timestamp(t / 1000.0), e, u, x, p, w, v, s
         FROM unnest($2::float8[], $3::float8[], $4::float8[], $5::float8[], $6::float8[], $7::float8[], $8::boolean[], $9::boolean[])
           AS r(t, e, u, x, p, w, v, s)`,
      [
        machineId,
        chunk.map((r) => r.t),
        chunk.map((r) => r.efficiency),
        chunk.map((r) => r.uEfficiency ?? 0.005),
        chunk.map((r) => r.operatingPoint ?? null),
        chunk.map((r) => r.power ?? null),
        chunk.map((r) => r.specificWork ?? null),
        chunk.map((r) => r.valid ?? true),
        chunk.map((r) => r.steady ?? true),
      ],
    );
  }
}

/** A full result computed by the thermo machine model, stored with its state points. */
export async function insertComputedResult(
  pool: pg.Pool,
  machineId: number,
  tMs: number,
  result: MachineResult,
  operatingPoint: number,
): Promise<void> {
  await ensurePartitions(pool, 'results', tMs, tMs);
  await pool.query(
    `INSERT INTO results (machine_id, time, p_in, t_in, h_in, s_in, p_out, t_out, h_out, s_out, t_out_s, h_out_s,
                          mass_flow, efficiency, u_efficiency, specific_work, power, entropy_generation, u_entropy_generation,
                          operating_point, steady, valid, flags)
     VALUES ($1, $2, $3, $4, $5, $6, $7, $8, $9, $10, $11, $12, $13, $14, $15, $16, $17, $18, $19, $20, true, $21, $22)`,
    [
      machineId,
      new Date(tMs),
      result.inlet.p,
      result.inlet.T,
      result.inlet.h,
      result.inlet.s,
      result.outlet.p,
      result.outlet.T,
      result.outlet.h,
      result.outlet.s,
      result.outletIsentropic.T,
      result.outletIsentropic.h,
      result.massFlow ?? null,
      result.isentropicEfficiency ?? null,
      0.004,
      result.specificWork ?? null,
      result.power ?? null,
      result.entropyGeneration ?? null,
      0.5,
      operatingPoint,
      result.valid,
      result.flags,
    ],
  );
}

/**
 * An invented steam turbine operating point (superheated exhaust so p and T fix it):
 * 4 MPa, 450 degC in; 0.5 MPa, 220 degC out; 20 kg/s.
 */
export function inventedTurbineResult(): MachineResult {
  return evaluateMachine({
    kind: 'turbine',
    fluid: water,
    inlet: { p: 4e6, T: 723.15 },
    outlet: { p: 0.5e6, T: 493.15 },
    massFlow: 20,
  });
}

/** An invented air compressor point: 1 bar, 20 degC in; 6 bar, 250 degC out; 5 kg/s. */
export function inventedCompressorResult(): MachineResult {
  return evaluateMachine({
    kind: 'compressor',
    fluid: dryAir(),
    inlet: { p: 1e5, T: 293.15 },
    outlet: { p: 6e5, T: 523.15 },
    massFlow: 5,
  });
}

export async function insertAlert(
  pool: pg.Pool,
  machineId: number,
  state: string,
  level: 'warning' | 'alarm' = 'warning',
  category: 'drift' | 'instrument' = 'drift',
): Promise<number> {
  const { rows } = await pool.query<{ id: string }>(
    `INSERT INTO alerts (machine_id, category, level, severity, state, message, raised_at)
     VALUES ($1, $2, $3, 'high', $4, 'Efficiency below baseline by more than the warning band (invented)', now() - interval '1 hour')
     RETURNING id`,
    [machineId, category, level, state],
  );
  return Number(rows[0]!.id);
}

/**
 * Let the analysis job (services/jobs) write what the API reads: the drift series onto every
 * result row (baseline efficiency, drift and their uncertainties) and machine_status. Rows inserted
 * by hand are queued for it first, as every writer of results does (migrations/0007).
 */
export async function analyseStored(pool: pg.Pool, nowMs: number, stepMs = 60_000): Promise<void> {
  await pool.query(
    `INSERT INTO analysis_pending (machine_id, from_time, to_time)
     SELECT machine_id, min(time), max(time) + interval '1 millisecond' FROM results GROUP BY machine_id`,
  );
  await runAnalysisOnce(pool, { nowMs, stepMs, maxBatches: Number.POSITIVE_INFINITY });
}
