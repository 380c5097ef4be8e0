/**
 * INVENTED DEMO DATA. A synthetic plant for tests and benchmarks: machines whose true efficiency
 * is set by us and turned into outlet temperatures through the thermo machine relations, with
 * seeded Gaussian noise of the stated instrument uncertainty. No real plant is described.
 */
import { type Fluid, gaussian, mulberry32 } from '@isentrope/thermo';
import type pg from 'pg';

export interface SyntheticMachine {
  readonly slug: string;
  readonly kind: 'turbine' | 'compressor';
  /** Inlet pressure [Pa abs], inlet temperature [K], outlet pressure [Pa abs], rated mass flow [kg/s]. */
  readonly pIn: number;
  readonly tIn: number;
  readonly pOut: number;
  readonly massFlow: number;
  /** True efficiency at rated flow on day 0 [-]. */
  readonly eta0: number;
  /** True degradation [efficiency points per day], negative = loss. */
  readonly ratePtsPerDay: number;
}

/** An invented air compressor drawing from the atmosphere (2 kPa above it) into 8 bar(a). */
export const SYNTHETIC_AIR_COMPRESSOR: SyntheticMachine = {
  slug: 'ac-1',
  kind: 'compressor',
  pIn: 101_325 + 2000,
  tIn: 293.15,
  pOut: 8e5,
  massFlow: 3,
  eta0: 0.8,
  ratePtsPerDay: -0.05,
};

/** Standard uncertainties of the invented instruments, in the tag units below. */
export const SYNTHETIC_UNCERTAINTY = {
  inletPressure: 0.01, // barg
  inletTemperature: 0.3, // degC
  outletPressure: 0.01, // bara
  outletTemperature: 0.3, // degC
  massFlow: 0.5, // percent of reading, t/h
} as const;

/** True efficiency [-] at time t [ms] and flow fraction x = m / m_rated: a parabola about x = 1 minus the degradation. */
export function trueEfficiency(m: SyntheticMachine, t0Ms: number, tMs: number, x: number): number {
  return m.eta0 - 0.03 * (x - 1) ** 2 + (m.ratePtsPerDay / 100) * ((tMs - t0Ms) / 86_400_000);
}

/** Flow fraction [-] at time t: a slow daily swing between about 0.8 and 1.1 (invented). */
export function flowFraction(tMs: number): number {
  return 0.95 + 0.15 * Math.sin((2 * Math.PI * tMs) / 86_400_000 / 1.3);
}

/** Outlet temperature [K] that gives efficiency eta (turbine: expansion; compressor: compression). */
export function outletTemperature(fluid: Fluid, m: SyntheticMachine, eta: number): number {
  const inlet = fluid.statePT(m.pIn, m.tIn);
  const outS = fluid.statePS(m.pOut, inlet.s);
  const hOut = m.kind === 'turbine' ? inlet.h - eta * (inlet.h - outS.h) : inlet.h + (outS.h - inlet.h) / eta;
  return fluid.statePH(m.pOut, hOut).T;
}

export interface SeedOptions {
  readonly fromMs: number;
  readonly toMs: number;
  /** Sample interval [ms]; default 60 000. */
  readonly stepMs?: number;
  readonly seed?: number;
  /** Inserted rows per statement; default 20 000. */
  readonly batch?: number;
  /** Flow fraction override (start-up and trip ramps). */
  readonly flow?: (tMs: number) => number;
  /** Outlet temperature frozen at this value [degC] over [fromMs, toMs) (a stuck transmitter). */
  readonly stuckOutletT?: { readonly fromMs: number; readonly toMs: number };
}

export interface SeededMachine {
  readonly machineId: number;
  readonly tagIds: Readonly<
    Record<'inletPressure' | 'inletTemperature' | 'outletPressure' | 'outletTemperature' | 'massFlow', number>
  >;
}

/** A site (ambient 1.01325 bara) for synthetic machines; returns its id. */
export async function seedSite(pool: pg.Pool, slug = 'synthetic-works'): Promise<number> {
  const res = await pool.query<{ id: number }>(
    `INSERT INTO sites (slug, name, time_zone, ambient_pressure, spec) VALUES ($1, $2, 'UTC', '1.01325 bara', '{}') RETURNING id`,
    [slug, 'Synthetic works (invented)'],
  );
  return (res.rows[0] as { id: number }).id;
}

/** Insert a machine and its five tags (units as a plant writes them). */
export async function seedMachine(
  pool: pg.Pool,
  siteId: number,
  m: SyntheticMachine,
): Promise<SeededMachine> {
  const res = await pool.query<{ id: number }>(
    `INSERT INTO machines (site_id, slug, name, kind, fluid, ratings, key_tags, baseline_spec, spec)
     VALUES ($1, $2, $3, $4, '"air"', $7, $5, $6, '{}') RETURNING id`,
    [
      siteId,
      m.slug,
      `${m.slug} (invented)`,
      m.kind,
      [`${m.slug}.FI`, `${m.slug}.PI-IN`],
      JSON.stringify({ operatingPoint: 'massFlow' }),
      JSON.stringify({ ratedFlow: `${m.massFlow * 3.6} t/h` }),
    ],
  );
  const machineId = (res.rows[0] as { id: number }).id;
  const tagDefs = [
    ['inletPressure', 'PI-IN', 'barg', { absolute: SYNTHETIC_UNCERTAINTY.inletPressure }],
    ['inletTemperature', 'TI-IN', 'degC', { absolute: SYNTHETIC_UNCERTAINTY.inletTemperature }],
    ['outletPressure', 'PI-OUT', 'bara', { absolute: SYNTHETIC_UNCERTAINTY.outletPressure }],
    ['outletTemperature', 'TI-OUT', 'degC', { absolute: SYNTHETIC_UNCERTAINTY.outletTemperature }],
    ['massFlow', 'FI', 't/h', { percentOfReading: SYNTHETIC_UNCERTAINTY.massFlow }],
  ] as const;
  const tagIds: Record<string, number> = {};
  for (const [role, suffix, unit, u] of tagDefs) {
    const t = await pool.query<{ id: number }>(
      `INSERT INTO tags (site_id, machine_id, name, role, unit, uncertainty, spec) VALUES ($1, $2, $3, $4, $5, $6, '{}') RETURNING id`,
      [siteId, machineId, `${m.slug}.${suffix}`, role, unit, JSON.stringify(u)],
    );
    tagIds[role] = (t.rows[0] as { id: number }).id;
  }
  return { machineId, tagIds: tagIds as SeededMachine['tagIds'] };
}

async function ensureSamplePartitions(pool: pg.Pool, fromMs: number, toMs: number): Promise<void> {
  const d = new Date(fromMs);
  for (
    let k = d.getUTCFullYear() * 12 + d.getUTCMonth();
    Date.UTC(Math.floor(k / 12), k % 12, 1) <= toMs;
    k++
  ) {
    const y = Math.floor(k / 12);
    const mo = k % 12;
    const name = `samples_p${y}_${String(mo + 1).padStart(2, '0')}`;
    await pool.query(
      `CREATE TABLE IF NOT EXISTS ${name} PARTITION OF samples FOR VALUES FROM ('${new Date(Date.UTC(y, mo, 1)).toISOString()}') TO ('${new Date(Date.UTC(y, mo + 1, 1)).toISOString()}')`,
    );
  }
}

/**
 * Samples of one synthetic machine every step, stamped 10 s into each minute, written straight
 * into `samples` (the ingest path is not under test here).
 */
export async function seedSamples(
  pool: pg.Pool,
  fluid: Fluid,
  m: SyntheticMachine,
  s: SeededMachine,
  o: SeedOptions,
): Promise<number> {
  await ensureSamplePartitions(pool, o.fromMs, o.toMs);
  const step = o.stepMs ?? 60_000;
  const normal = gaussian(mulberry32(o.seed ?? 1));
  const noise = (sd: number): number => sd * normal();
  const ids: number[] = [];
  const times: number[] = [];
  const values: number[] = [];
  let count = 0;
  const flush = async (): Promise<void> => {
    if (ids.length === 0) return;
    await pool.query(
      `INSERT INTO samples (tag_id, time, value, quality)
       SELECT u.i, to_timestamp(u.t / 1000), u.v, 0 FROM unnest($1::int[], $2::float8[], $3::float8[]) AS u(i, t, v)`,
      [ids, times, values],
    );
    count += ids.length;
    ids.length = 0;
    times.length = 0;
    values.length = 0;
  };
  const stuckValue = new Map<string, number>();
  for (let t = o.fromMs; t < o.toMs; t += step) {
    const x = (o.flow ?? flowFraction)(t);
    const ts = t + 10_000;
    const running = x > 0.05;
    // A stopped machine: inlet and outlet at rest, both near the inlet state.
    const pOut = running ? m.pIn + (m.pOut - m.pIn) * Math.min(1, x) : m.pIn;
    let tOut = m.tIn;
    if (running) {
      const eta = trueEfficiency(m, o.fromMs, t, x);
      tOut = outletTemperature(fluid, { ...m, pOut }, eta);
    }
    let tOutC = tOut - 273.15 + noise(SYNTHETIC_UNCERTAINTY.outletTemperature);
    if (o.stuckOutletT !== undefined && t >= o.stuckOutletT.fromMs && t < o.stuckOutletT.toMs) {
      if (!stuckValue.has('t')) stuckValue.set('t', tOutC);
      tOutC = stuckValue.get('t') as number;
    }
    const flowTh = m.massFlow * Math.max(0, x) * 3.6;
    const row: [number, number][] = [
      [s.tagIds.inletPressure, (m.pIn - 101_325) / 1e5 + noise(SYNTHETIC_UNCERTAINTY.inletPressure)],
      [s.tagIds.inletTemperature, m.tIn - 273.15 + noise(SYNTHETIC_UNCERTAINTY.inletTemperature)],
      [s.tagIds.outletPressure, pOut / 1e5 + noise(SYNTHETIC_UNCERTAINTY.outletPressure)],
      [s.tagIds.outletTemperature, tOutC],
      // A live transmitter at zero flow still shows noise about zero (0.01 t/h, invented).
      [
        s.tagIds.massFlow,
        flowTh * (1 + noise(SYNTHETIC_UNCERTAINTY.massFlow / 100)) + (running ? 0 : noise(0.01)),
      ],
    ];
    for (const [id, v] of row) {
      ids.push(id);
      times.push(ts);
      values.push(v);
    }
    if (ids.length >= (o.batch ?? 20_000)) await flush();
  }
  await flush();
  return count;
}
