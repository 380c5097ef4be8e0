import { mkdtempSync, writeFileSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import { PassThrough, Writable } from 'node:stream';
import { describe, expect, it } from 'vitest';
import steamCases from '../../../../packages/thermo/src/steam/fixtures/machine-cases.json' with {
  type: 'json',
};
import { CAUTION, runCalc } from './calc.js';

/** Runs calc on an in-memory case (through stdin), capturing stdout and stderr. */
async function calc(
  caseObject: unknown,
  args: string[] = ['--json'],
): Promise<{ code: number; out: string; err: string; json: () => Record<string, unknown> }> {
  const stdin = new PassThrough();
  stdin.end(typeof caseObject === 'string' ? caseObject : JSON.stringify(caseObject));
  let out = '';
  let err = '';
  const sink = (append: (s: string) => void) =>
    new Writable({
      write(chunk, _enc, done) {
        append(String(chunk));
        done();
      },
    });
  const code = await runCalc(args, {
    stdin,
    stdout: sink((s) => {
      out += s;
    }),
    stderr: sink((s) => {
      err += s;
    }),
  });
  return { code, out, err, json: () => JSON.parse(out) as Record<string, unknown> };
}

const pumpCase = {
  machine: 'pump',
  fluid: { liquid: { density: '1000 kg/m3', cp: '4.186 kJ/kg/K' } },
  ambient: '1.01325 bara',
  inlet: { p: '1 barg', T: '20 degC' },
  outlet: { p: '11 barg', T: '20.06 degC' },
  massFlow: '180 t/h',
  shaftPower: '62.5 kW',
  uncertainty: {
    'inlet.p': '0.01 bar',
    'outlet.p': '0.5 %',
    'inlet.T': '0.01 K',
    'outlet.T': '0.01 K',
    massFlow: '1 %',
  },
};

describe('isentrope calc', () => {
  it('computes a pump case from stdin as JSON, with uncertainty and the caution', async () => {
    const r = await calc(pumpCase);
    expect(r.err).toBe('');
    expect(r.code).toBe(0);
    const j = r.json();
    // 180 t/h = 50 kg/s through 10 bar: H = 1e6 Pa/(1000 kg/m3 x 9.80665 m/s2) = 101.97 m (ISO 80000-3 g).
    expect(j.head as number).toBeCloseTo(101.97, 2);
    expect(j.hydraulicPower as number).toBeCloseTo(50, 6); // kW = 50 kg/s x 1e6 Pa / 1000 kg/m3
    expect(j.hydraulicEfficiency as number).toBeCloseTo(0.8, 9);
    // ISO 5198 thermodynamic method on the incompressible model: v dp / (c dT + v dp).
    expect(j.isentropicEfficiency as number).toBeCloseTo(1000 / (4186 * 0.06 + 1000), 6);
    expect(j.specificWork as number).toBeCloseTo((4186 * 0.06 + 1000) / 1000, 6); // kJ/kg
    const u = j.uncertainty as Record<string, number>;
    expect(u.isentropicEfficiency).toBeGreaterThan(0);
    expect(u.power).toBeGreaterThan(0);
    const inlet = j.inlet as Record<string, number>;
    expect(inlet.p).toBeCloseTo(201325, 6); // 1 barg + 1.01325 bara
    expect(inlet.T).toBeCloseTo(293.15, 9);
    expect(j.caution).toBe(CAUTION);
    expect(j.flags).toEqual([]);
    expect(j.valid).toBe(true);
  });

  it('reads a case file and prints an aligned table', async () => {
    const dir = mkdtempSync(join(tmpdir(), 'isentrope-calc-'));
    const file = join(dir, 'pump.json');
    writeFileSync(file, JSON.stringify(pumpCase));
    const r = await calc('', [file]);
    expect(r.code).toBe(0);
    expect(r.out).toMatch(/hydraulic efficiency\s+0\.8\s+± /);
    expect(r.out).toContain('head');
    expect(r.out).toContain(CAUTION);
    // Values are right-aligned, so every uncertainty column starts at the same position.
    const rows = r.out.split('\n').filter((l) => l.includes('±'));
    const starts = new Set(rows.map((l) => l.indexOf('±')));
    expect(rows.length).toBeGreaterThan(3);
    expect(starts.size).toBe(1);
  });

  it('an unknown unit exits 2 naming the field', async () => {
    const r = await calc({ ...pumpCase, inlet: { p: '1 barg', T: '20 degX' } });
    expect(r.code).toBe(2);
    expect(r.err).toMatch(/inlet\.T: Unknown unit "degX"/);
    expect(r.out).toBe('');
  });

  it('a gauge pressure without ambient exits 2 naming the field', async () => {
    const { ambient: _dropped, ...noAmbient } = pumpCase;
    const r = await calc(noAmbient);
    expect(r.code).toBe(2);
    expect(r.err).toMatch(/inlet\.p: 1 barg is a gauge pressure/);
    expect(r.err).toMatch(/outlet\.p: /);
  });

  it('a structural error exits 2 with the zod path', async () => {
    const r = await calc({ ...pumpCase, machine: 'boiler', inlet: { p: '1 barg' } });
    expect(r.code).toBe(2);
    expect(r.err).toMatch(/machine: /);
    expect(r.err).toMatch(/inlet\.T: /);
  });

  it('a temperature where a pressure belongs exits 2 naming the field', async () => {
    const r = await calc({ ...pumpCase, outlet: { p: '20 degC', T: '20 degC' } });
    expect(r.code).toBe(2);
    expect(r.err).toMatch(/outlet\.p: "20 degC" is a temperature, not a pressure/);
  });

  it('a pump outlet below its inlet exits 2 naming outlet.p', async () => {
    const r = await calc({ ...pumpCase, outlet: { p: '0.5 barg', T: '20 degC' } });
    expect(r.code).toBe(2);
    expect(r.err).toMatch(/outlet\.p: pump outlet pressure/);
  });

  it('not JSON, or an unknown option, exits 2', async () => {
    expect((await calc('{ not json')).code).toBe(2);
    expect((await calc(pumpCase, ['--fast'])).code).toBe(2);
  });
});

describe('isentrope calc on steam and gases', () => {
  it('steam turbine 3 MPa, 400 degC to 50 kPa, 100 degC (inputs after a common textbook example), with uncertainty', async () => {
    const r = await calc({
      machine: 'turbine',
      fluid: 'water',
      inlet: { p: '3 MPa', T: '400 degC' },
      outlet: { p: '50 kPa', T: '100 degC' },
      massFlow: '3.641 kg/s', // about 2 MW on this expansion
      uncertainty: { 'inlet.T': '1 K', 'outlet.T': '1 K', 'inlet.p': '0.5 %', 'outlet.p': '0.5 %' },
    });
    expect(r.err).toBe('');
    expect(r.code).toBe(0);
    const j = r.json();
    // Expected states: IAPWS-IF97 via python3-iapws (packages/thermo/src/steam/fixtures/machine-cases.json,
    // made by packages/thermo/scripts/make-iapws-fixture.py); the JSON gives kJ/kg and kW.
    const ref = steamCases.turbine;
    const w = (ref.inlet.h - ref.outlet.h) / 1e3; // [kJ/kg], positive out of a turbine
    expect(j.isentropicEfficiency as number).toBeCloseTo(
      (ref.inlet.h - ref.outlet.h) / (ref.inlet.h - ref.outletIsentropic.h),
      6,
    );
    expect(j.specificWork as number).toBeCloseTo(w, 3);
    expect(j.power as number).toBeCloseTo(3.641 * w, 2);
    expect((j.outletIsentropic as Record<string, number>).h).toBeCloseTo(ref.outletIsentropic.h / 1e3, 3);
    expect((j.outletIsentropic as Record<string, number>).quality).toBeCloseTo(ref.outletIsentropic.x, 6);
    expect((j.outlet as Record<string, number>).quality).toBeUndefined(); // superheated
    const u = j.uncertainty as Record<string, number>;
    expect(u.isentropicEfficiency).toBeGreaterThan(0);
    expect(u.isentropicEfficiency).toBeLessThan(0.05);
  });

  it('wet steam exhaust: outlet from the energy balance, quality reported', async () => {
    const r = await calc({
      machine: 'turbine',
      fluid: 'water',
      inlet: { p: '30 bara', T: '400 degC' },
      outlet: { p: '0.1 bara', T: '45.8 degC' },
      massFlow: '36 t/h',
      shaftPower: '8 MW',
    });
    expect(r.code).toBe(0);
    const j = r.json();
    expect(j.flags).toEqual(['wet-outlet-energy-balance']);
    expect(j.specificWork as number).toBeCloseTo(800, 9); // 8 MW / 10 kg/s, energy balance
    const out = j.outlet as Record<string, number>;
    // Lever rule with h_in at 3 MPa, 400 degC and hf, hg at 10 kPa, all IAPWS-IF97 via python3-iapws
    // (machine-cases.json): x = (h_in - 800 kJ/kg - hf)/(hg - hf).
    const s10 = steamCases.saturation.find((s) => s.p === 10e3)!;
    expect(out.quality).toBeCloseTo((steamCases.turbine.inlet.h - 800e3 - s10.hf) / (s10.hg - s10.hf), 6);
  });

  it('natural-gas compressor on Peng-Robinson, with normal volume flow and polytropic figures', async () => {
    const r = await calc({
      machine: 'compressor',
      fluid: {
        composition: { CH4: 0.9, C2H6: 0.06, C3H8: 0.02, N2: 0.01, CO2: 0.01 },
        model: 'peng-robinson',
      },
      ambient: '1.01325 bara',
      inlet: { p: '39 barg', T: '20 degC' },
      outlet: { p: '69 barg', T: '67 degC' },
      massFlow: '100000 Nm3/h',
      uncertainty: { 'inlet.p': { percentOfSpan: 0.1, span: '100 bar' }, 'outlet.T': '0.5 K' },
    });
    expect(r.err).toBe('');
    const j = r.json();
    expect(j.polytropicEfficiency as number).toBeGreaterThan(j.isentropicEfficiency as number);
    expect(j.polytropicHead as number).toBeGreaterThan(0);
    // 100000 Nm3/h at 0 degC, 1 atm (DIN 1343) of an ideal gas of M = sum x_i M_i (Poling et al. molar masses).
    const M = 0.9 * 16.043 + 0.06 * 30.07 + 0.02 * 44.097 + 0.01 * 28.014 + 0.01 * 44.01; // g/mol
    expect(j.massFlow as number).toBeCloseTo(
      ((100000 / 3600) * 101325 * M) / 1000 / (8.314462618 * 273.15),
      1,
    );
    expect((j.uncertainty as Record<string, number>).polytropicEfficiency).toBeGreaterThan(0);
  });

  it('a composition not summing to one exits 2 naming fluid.composition', async () => {
    const r = await calc({
      machine: 'compressor',
      fluid: { composition: { CH4: 0.7, C2H6: 0.1 }, model: 'ideal' },
      inlet: { p: '1 bara', T: '20 degC' },
      outlet: { p: '2 bara', T: '80 degC' },
    });
    expect(r.code).toBe(2);
    expect(r.err).toMatch(/fluid\.composition: Mole fractions add up to 0\.(8|79)/);
  });

  it('a turbine outlet pressure above its inlet exits 2 naming outlet.p', async () => {
    const r = await calc({
      machine: 'turbine',
      fluid: 'air',
      inlet: { p: '1 bara', T: '500 degC' },
      outlet: { p: '2 bara', T: '400 degC' },
    });
    expect(r.code).toBe(2);
    expect(r.err).toMatch(/outlet\.p: turbine outlet pressure/);
  });

  it('an uncertainty in the wrong unit exits 2 naming the uncertainty key', async () => {
    const r = await calc({
      machine: 'turbine',
      fluid: 'air',
      inlet: { p: '10 bara', T: '500 degC' },
      outlet: { p: '2 bara', T: '300 degC' },
      uncertainty: { 'inlet.T': '2 bar' },
    });
    expect(r.code).toBe(2);
    expect(r.err).toMatch(/uncertainty\.inlet\.T: "2 bar" is not a temperature/);
  });

  it('a wet exhaust without shaft power: no efficiency, outlet enthalpy null, not valid', async () => {
    const r = await calc({
      machine: 'turbine',
      fluid: 'water',
      inlet: { p: '30 bara', T: '400 degC' },
      outlet: { p: '0.1 bara', T: '46 degC' },
      massFlow: '10 kg/s',
      uncertainty: { massFlow: '1 %' },
    });
    expect(r.code).toBe(0);
    const j = r.json();
    expect(j.flags).toEqual(['outlet-undetermined']);
    expect(j.isentropicEfficiency).toBeUndefined();
    expect(j.specificWork).toBeUndefined();
    expect((j.outlet as Record<string, unknown>).h).toBeNull();
    expect(j.valid).toBe(false);
    const table = await calc(
      {
        machine: 'turbine',
        fluid: 'water',
        inlet: { p: '30 bara', T: '400 degC' },
        outlet: { p: '0.1 bara', T: '46 degC' },
      },
      [],
    );
    expect(table.out).toContain('flags: outlet-undetermined');
    expect(table.out).toMatch(/valid: NO/);
  });

  it('a fan with draft pressures in mmH2O (gauge, against ambient) on dry air', async () => {
    const r = await calc({
      machine: 'fan',
      fluid: 'air',
      ambient: '1013.25 mbar',
      inlet: { p: '-50 mmH2O', T: '20 degC' },
      outlet: { p: '250 mmH2O', T: '23 degC' },
      volumeFlow: '36000 m3/h',
      shaftPower: '37 kW',
    });
    expect(r.err).toBe('');
    const j = r.json();
    // 300 mmH2O x 9.80665 Pa/mm (conventional, NIST SP 811) = 2942 Pa fan pressure.
    expect(j.fanPressureRise as number).toBeCloseTo(300 * 9.80665, 6);
    // Air power = q_V1 p_F k_p (ISO 5801) with q_V1 = 10 m3/s.
    expect(j.airPower as number).toBeCloseTo(
      (10 * 300 * 9.80665 * (j.compressibilityCoefficient as number)) / 1e3,
      6,
    );
    expect(j.fanEfficiency as number).toBeCloseTo((j.airPower as number) / 37, 9);
    const noAmbient = await calc({
      machine: 'fan',
      fluid: 'air',
      inlet: { p: '1013.25 mbar', T: '20 degC' },
      outlet: { p: '250 mmH2O', T: '23 degC' },
    });
    expect(noAmbient.code).toBe(2);
    expect(noAmbient.err).toMatch(/outlet\.p: .*gauge \(draft\) pressure: give "ambient"/);
  });
});
