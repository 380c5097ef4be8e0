/**
 * Per-segment sensitivities (linearise.ts) against the full per-point GUM of @isentrope/thermo,
 * on invented data for a back-pressure steam turbine (IAPWS-IF97) and an air compressor.
 * INVENTED DEMO DATA: no real machine is described.
 */
import { type Fluid, gaussian, mulberry32 } from '@isentrope/thermo';
import { describe, expect, it } from 'vitest';
import { defaultFluidResolver, type MachineRow, prepareMachine, type TagRow } from './machine.js';
import { type RawSeries, type ResultRow, resolveComputeOptions } from './options.js';
import { computeRange } from './pipeline.js';

const T0 = Date.UTC(2026, 2, 2);
const MIN = 60_000;
const H = 3_600_000;

/** A fluid that counts its state calls, to show the segment form calls the model less. */
function counting(inner: Fluid): { fluid: Fluid; calls: () => number } {
  let n = 0;
  const fluid: Fluid = {
    name: inner.name,
    kind: inner.kind,
    ...(inner.saturationTemperature === undefined
      ? {}
      : { saturationTemperature: (p: number) => (inner.saturationTemperature as (p: number) => number)(p) }),
    statePT: (p, T) => {
      n++;
      return inner.statePT(p, T);
    },
    statePH: (p, h) => {
      n++;
      return inner.statePH(p, h);
    },
    statePS: (p, s) => {
      n++;
      return inner.statePS(p, s);
    },
  };
  return { fluid, calls: () => n };
}

interface Case {
  readonly row: MachineRow;
  /** Tag readings [tag unit] at time t and flow fraction x, without noise. */
  readonly reading: (role: string, x: number) => number;
  /** Noise standard deviation per role [tag unit]. */
  readonly noise: Readonly<Record<string, number>>;
}

function tag(id: number, role: string, unit: string, uncertainty: unknown): TagRow {
  return { id, name: `T${id}`, role, unit, uncertainty, validMin: null, validMax: null };
}

function machineRow(
  kind: MachineRow['kind'],
  fluid: unknown,
  tags: TagRow[],
  ratedFlow: string,
  op: string,
): MachineRow {
  return {
    id: 1,
    slug: `${kind}-case`,
    name: `${kind} (invented)`,
    kind,
    fluid,
    ratings: { ratedFlow },
    driverEfficiency: 0.975,
    outOfService: false,
    keyTags: [tags[4]?.name ?? '', tags[0]?.name ?? ''],
    baselineSpec: { operatingPoint: op },
    siteAmbientPressure: '1.013 bara',
    siteTimeZone: 'UTC',
    tags,
    barometer: undefined,
  };
}

/** Samples every minute, 10 s into it, with a slow +-5 % load swing (6 h period) and seeded noise. */
function series(c: Case, fromMs: number, toMs: number, seed: number): Map<number, RawSeries> {
  const normal = gaussian(mulberry32(seed));
  const out = new Map<number, RawSeries>();
  for (const t of c.row.tags) {
    const times: number[] = [];
    const values: number[] = [];
    for (let ms = fromMs; ms < toMs; ms += MIN) {
      const x = 1 + 0.05 * Math.sin((2 * Math.PI * (ms - fromMs)) / (6 * H));
      times.push(ms + 10_000);
      values.push(c.reading(t.role, x) + (c.noise[t.role] ?? 0) * normal());
    }
    // Stored quality 192: good, OPC DA quality byte.
    out.set(t.id, { t: times, value: values, quality: times.map(() => 192) });
  }
  return out;
}

function steamTurbine(water: Fluid): Case {
  const tags = [
    tag(11, 'inletPressure', 'barg', { percentOfSpan: 0.1, span: 60 }),
    tag(12, 'inletTemperature', 'degC', { absolute: 1 }),
    tag(13, 'outletPressure', 'barg', { percentOfSpan: 0.1, span: 10 }),
    tag(14, 'outletTemperature', 'degC', { absolute: 1 }),
    tag(15, 'massFlow', 't/h', { percentOfReading: 1 }),
    tag(16, 'electricalPower', 'MW', { percentOfReading: 0.5 }),
  ];
  const ambient = 1.013e5;
  const pIn = 40e5 + ambient;
  const tIn = 673.15;
  const inlet = water.statePT(pIn, tIn);
  const eta = 0.8;
  const state = (x: number): { pOut: number; tOut: number; power: number } => {
    const pOut = 3.5e5 * x + ambient;
    const hs = water.statePS(pOut, inlet.s).h;
    const hOut = inlet.h - eta * (inlet.h - hs);
    const m = (60 / 3.6) * x;
    return { pOut, tOut: water.statePH(pOut, hOut).T, power: m * (inlet.h - hOut) * 0.975 };
  };
  return {
    row: machineRow('turbine', 'water', tags, '60 t/h', 'load'),
    reading: (role, x) => {
      const s = state(x);
      switch (role) {
        case 'inletPressure':
          return (pIn - ambient) / 1e5;
        case 'inletTemperature':
          return tIn - 273.15;
        case 'outletPressure':
          return (s.pOut - ambient) / 1e5;
        case 'outletTemperature':
          return s.tOut - 273.15;
        case 'massFlow':
          return 60 * x;
        default:
          return s.power / 1e6;
      }
    },
    noise: {
      inletPressure: 0.03,
      inletTemperature: 0.3,
      outletPressure: 0.005,
      outletTemperature: 0.3,
      massFlow: 0.2,
      electricalPower: 0.01,
    },
  };
}

function airCompressor(air: Fluid): Case {
  const tags = [
    tag(21, 'inletPressure', 'mbarg', { absolute: 1 }),
    tag(22, 'inletTemperature', 'degC', { absolute: 0.3 }),
    tag(23, 'outletPressure', 'barg', { percentOfSpan: 0.1, span: 10 }),
    tag(24, 'outletTemperature', 'degC', { absolute: 0.5 }),
    tag(25, 'massFlow', 'kg/s', { percentOfReading: 1 }),
    tag(26, 'electricalPower', 'kW', { percentOfReading: 0.5 }),
  ];
  const ambient = 1.013e5;
  const pIn = ambient - 1500;
  const tIn = 293.15;
  const inlet = air.statePT(pIn, tIn);
  const state = (x: number): { pOut: number; tOut: number; power: number } => {
    const pOut = 7e5 * (0.9 + 0.1 * x) + ambient;
    const hs = air.statePS(pOut, inlet.s).h;
    const hOut = inlet.h + (hs - inlet.h) / 0.82;
    const m = 0.9 * x;
    return { pOut, tOut: air.statePH(pOut, hOut).T, power: (m * (hOut - inlet.h)) / 0.975 };
  };
  return {
    row: machineRow('compressor', 'air', tags, '3.24 t/h', 'massFlow'),
    reading: (role, x) => {
      const s = state(x);
      switch (role) {
        case 'inletPressure':
          return (pIn - ambient) / 100;
        case 'inletTemperature':
          return tIn - 273.15;
        case 'outletPressure':
          return (s.pOut - ambient) / 1e5;
        case 'outletTemperature':
          return s.tOut - 273.15;
        case 'massFlow':
          return 0.9 * x;
        default:
          return s.power / 1e3;
      }
    },
    noise: {
      inletPressure: 0.5,
      inletTemperature: 0.2,
      outletPressure: 0.005,
      outletTemperature: 0.3,
      massFlow: 0.005,
      electricalPower: 0.5,
    },
  };
}

function run(c: Case, gum: 'segment' | 'point'): { rows: ResultRow[]; calls: number } {
  const counted = counting(defaultFluidResolver(c.row.fluid));
  const machine = prepareMachine(c.row, () => counted.fluid);
  const samples = series(c, T0, T0 + 7 * H, 7);
  const rows = computeRange(machine, samples, T0 + 2 * H, T0 + 6 * H, resolveComputeOptions({ gum }));
  return { rows, calls: counted.calls() };
}

const KEYS = [
  'uEfficiency',
  'uSpecificWork',
  'uPower',
  'uEntropyGeneration',
  'uPolytropicEfficiency',
] as const;

describe('GUM with sensitivities per segment operating point (JCGM 100:2008 5.1.2, eq. 10)', () => {
  for (const [name, make] of [
    ['back-pressure steam turbine on IAPWS-IF97', () => steamTurbine(defaultFluidResolver('water'))],
    ['air compressor on dry air', () => airCompressor(defaultFluidResolver('air'))],
  ] as const) {
    it(`${name}: per-segment uncertainties within 2 % of the per-point GUM`, () => {
      const c = make();
      const seg = run(c, 'segment');
      const pt = run(c, 'point');
      expect(seg.rows.length).toBe(4 * 60);
      expect(pt.rows.length).toBe(4 * 60);
      let compared = 0;
      let worst = 0;
      for (let i = 0; i < seg.rows.length; i++) {
        const a = seg.rows[i] as ResultRow;
        const b = pt.rows[i] as ResultRow;
        // The figures themselves come from the same single model evaluation.
        expect(a.efficiency).toBe(b.efficiency);
        expect(a.valid).toBe(b.valid);
        expect(a.flags).toEqual(b.flags);
        // Every point the model ran on (steady or not), so the transients are compared too.
        if (b.efficiency === null) continue;
        for (const k of KEYS) {
          const ub = b[k];
          const ua = a[k];
          if (ub === null) {
            expect(ua).toBeNull();
            continue;
          }
          expect(ua).not.toBeNull();
          worst = Math.max(worst, Math.abs((ua as number) - ub) / ub);
        }
        compared++;
      }
      // The machine runs throughout this invented case: every point is compared.
      expect(compared).toBeGreaterThan(230);
      // Acceptance limit of the brief: 2 % relative (common practice, no source).
      expect(worst).toBeLessThan(0.02);
      // The point of the exercise: far fewer property calls than 2n + 1 model runs per point.
      expect(seg.calls).toBeLessThan(pt.calls / 3);
    });
  }
});
