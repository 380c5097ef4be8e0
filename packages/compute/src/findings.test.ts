/**
 * Stored instrument findings applied by the compute pass, on an invented air compressor (INVENTED
 * DATA: no real machine is described). Flag rules: common practice, no source.
 */
import { gaussian, mulberry32 } from '@isentrope/thermo';
import { describe, expect, it } from 'vitest';
import { addInstrumentFlags, type FindingFlag, findingFlags } from './findings.js';
import { defaultFluidResolver, type MachineRow, prepareMachine, type TagRow } from './machine.js';
import { type RawSeries, resolveComputeOptions } from './options.js';
import { computeRange } from './pipeline.js';

const MIN = 60_000;
const H = 3_600_000;
const T0 = Date.UTC(2026, 2, 2);
const IN = 'fault:gauge-absolute:inletPressure';

describe('findingFlags', () => {
  it('flags a standing finding from its step on, a reverted one up to its end, a dismissed one nowhere', () => {
    expect(
      findingFlags([
        { role: 'inletPressure', at: 100, endedAt: null, status: 'standing' },
        { role: 'outletPressure', at: 200, endedAt: 300, status: 'reverted' },
        { role: 'outletPressure', at: 400, endedAt: null, status: 'dismissed' },
      ]),
    ).toEqual([
      { flag: IN, fromMs: 100, toMs: Number.POSITIVE_INFINITY },
      { flag: 'fault:gauge-absolute:outletPressure', fromMs: 200, toMs: 300 },
    ]);
  });
});

describe('addInstrumentFlags', () => {
  const findings: FindingFlag[] = [{ flag: IN, fromMs: 100, toMs: 200 }];

  it('adds a finding inside its interval [from, to) only, once', () => {
    const at = (t: number, flags: string[] = []): [boolean, string[]] => [
      addInstrumentFlags(t, 5e5, 10e5, findings, flags),
      flags,
    ];
    expect(at(99)).toEqual([false, []]);
    expect(at(100)).toEqual([true, [IN]]);
    expect(at(199, [IN])).toEqual([false, [IN]]);
    expect(at(200)).toEqual([false, []]);
  });

  it('flags an absolute pressure at or below zero, not a low positive one nor an absent one', () => {
    const flags: string[] = [];
    expect(addInstrumentFlags(0, 0, -800, [], flags)).toBe(true);
    expect(flags).toEqual([
      'fault:pressure-not-positive:inletPressure',
      'fault:pressure-not-positive:outletPressure',
    ]);
    expect(addInstrumentFlags(0, 1, null, [], [])).toBe(false);
  });
});

function tag(id: number, role: string, unit: string, uncertainty: unknown): TagRow {
  return { id, name: `T${id}`, role, unit, uncertainty, validMin: null, validMax: null };
}

/** An invented air compressor: 1.03 bar(a) and 20 degC in, 8 bar(a) and 290 degC out, 10.8 t/h. */
const COMPRESSOR: MachineRow = {
  id: 7,
  slug: 'ac-test',
  name: 'air compressor (invented)',
  kind: 'compressor',
  fluid: 'air',
  ratings: { ratedFlow: '10.8 t/h' },
  driverEfficiency: null,
  outOfService: false,
  keyTags: ['T5', 'T1'],
  baselineSpec: { operatingPoint: 'massFlow' },
  siteAmbientPressure: '1.013 bara',
  siteTimeZone: 'UTC',
  tags: [
    tag(1, 'inletPressure', 'bara', { absolute: 0.005 }),
    tag(2, 'inletTemperature', 'degC', { absolute: 0.3 }),
    tag(3, 'outletPressure', 'bara', { absolute: 0.02 }),
    tag(4, 'outletTemperature', 'degC', { absolute: 0.3 }),
    tag(5, 'massFlow', 't/h', { percentOfReading: 0.5 }),
  ],
  barometer: undefined,
};
const LEVEL: Readonly<Record<number, number>> = { 1: 1.03, 2: 20, 3: 8, 4: 290, 5: 10.8 };

function samples(fromMs: number, toMs: number): Map<number, RawSeries> {
  const normal = gaussian(mulberry32(5));
  const out = new Map<number, RawSeries>();
  for (const t of COMPRESSOR.tags) {
    const times: number[] = [];
    const values: number[] = [];
    for (let ms = fromMs; ms < toMs; ms += MIN) {
      times.push(ms + 10_000);
      values.push((LEVEL[t.id] as number) * (1 + 0.001 * normal()));
    }
    // Stored quality 192: good, OPC DA quality byte.
    out.set(t.id, { t: times, value: values, quality: times.map(() => 192) });
  }
  return out;
}

describe('the compute pass with stored findings', () => {
  const machine = prepareMachine(COMPRESSOR, defaultFluidResolver);
  const o = resolveComputeOptions();
  const data = samples(T0, T0 + 4 * H);
  const from = T0 + 2 * H;
  const to = T0 + 3 * H;
  const step = from + 30 * MIN;

  it('flags every row a finding covers and makes it invalid, leaving the figures and the other rows alone', () => {
    const plain = computeRange(machine, data, from, to, o);
    const flagged = computeRange(machine, data, from, to, o, [
      { flag: IN, fromMs: step, toMs: Number.POSITIVE_INFINITY },
    ]);
    expect(plain.some((r) => r.time >= step && r.valid)).toBe(true);
    expect(flagged).toHaveLength(60);
    flagged.forEach((r, k) => {
      const p = plain[k];
      expect(r.flags.includes(IN)).toBe(r.time >= step);
      expect(r.valid).toBe(r.time >= step ? false : p?.valid);
      expect(r.efficiency).toBe(p?.efficiency);
    });
  });

  it('gives the same rows however the range is split (a recompute keeps the flag)', () => {
    const findings = [{ flag: IN, fromMs: step, toMs: step + 10 * MIN }];
    const whole = computeRange(machine, data, from, to, o, findings);
    const parts = [
      ...computeRange(machine, data, from, step + 5 * MIN, o, findings),
      ...computeRange(machine, data, step + 5 * MIN, to, o, findings),
    ];
    expect(parts).toEqual(whole);
    expect(whole.filter((r) => r.flags.includes(IN)).map((r) => r.time)).toEqual(
      Array.from({ length: 10 }, (_, k) => step + k * MIN),
    );
  });
});
