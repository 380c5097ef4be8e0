import { describe, expect, it } from 'vitest';
import {
  AmbientPressureRequiredError,
  acceptedUnits,
  BadQuantityError,
  canonicalUnit,
  convertUnit,
  fromSI,
  idealGasMolarVolume,
  isGaugeUnit,
  normalVolumeFlowToMassFlow,
  parseQuantity,
  toSI,
  UnitUnknownError,
  unitDimension,
  volumeReference,
} from './index.js';

const AMBIENT = 101_325; // [Pa]
const rel = (a: number, b: number) => Math.abs(a - b) / Math.abs(b);

describe('parseQuantity: the examples of the brief', () => {
  // Factors: NIST SP 811 (2008) Appendix B; the pound, inch, standard gravity and atmosphere are exact.
  const cases: [string, number, string, string][] = [
    ['40 barg', 40e5 + AMBIENT, 'barg', 'pressure'], // bar = 1e5 Pa by definition
    ['12.5 t/h', (12.5 * 1000) / 3600, 't/h', 'massFlow'],
    ['350 degC', 623.15, 'degC', 'temperature'], // T/K = t/degC + 273.15 (SI Brochure, 9th ed.)
    ['14.7 psia', 14.7 * 6894.757293168361, 'psia', 'pressure'], // NIST SP 811: 1 psi = 6.894757E+03 Pa
    ['0.35 bar(a)', 0.35e5, 'bar(a)', 'pressure'],
    ['250 mbar', 25_000, 'mbar', 'pressure'],
    ['1.01325 bara', 101_325, 'bara', 'pressure'],
    ['-0.2 kPa(g)', AMBIENT - 200, 'kPa(g)', 'pressure'],
  ];
  for (const [text, si, unit, dimension] of cases) {
    it(text, () => {
      const q = parseQuantity(text, { ambientPressure: AMBIENT });
      expect(q.unit).toBe(unit);
      expect(q.dimension).toBe(dimension);
      expect(rel(q.valueSI, si)).toBeLessThan(1e-14);
    });
  }

  it('psi factor is 6894.757 Pa (NIST SP 811 Appendix B.8: 6.894 757 E+03)', () => {
    expect(toSI(1, 'psia')).toBeCloseTo(6894.757, 3);
  });

  it('degF: 212 degF is 373.15 K and 32 degF is 273.15 K (definition of the Fahrenheit scale)', () => {
    expect(toSI(212, 'degF')).toBeCloseTo(373.15, 10);
    expect(toSI(32, '°F')).toBeCloseTo(273.15, 10);
  });

  it('mmH2O is 9.80665 Pa per mm, inH2O 249.08891 Pa (conventional, NIST SP 811 Appendix B.8)', () => {
    expect(toSI(1, 'mmH2O')).toBe(9.80665);
    expect(toSI(1, 'inH2O')).toBeCloseTo(249.08891, 5);
    expect(unitDimension('mmH2O')).toBe('pressureDifference');
    expect(isGaugeUnit('mmH2O')).toBe(false);
  });

  it('hp is the mechanical horsepower, 745.699 87 W (NIST SP 811 Appendix B.8)', () => {
    expect(toSI(1, 'hp')).toBeCloseTo(745.69987, 5);
  });

  it('lb/h: 1 lb = 0.45359237 kg exactly (NIST SP 811)', () => {
    expect(toSI(3600, 'lb/h')).toBeCloseTo(0.45359237, 14);
    expect(toSI(3.6, 'klb/h')).toBeCloseTo(0.45359237, 14);
  });
});

describe('spelling tolerance (common practice, no source)', () => {
  it.each([
    ['barG', 'barg'],
    ['BARA', 'bara'],
    ['deg C', 'degC'],
    ['°C', 'degC'],
    ['℃', 'degC'],
    ['m³/h', 'm3/h'],
    ['kPa (g)', 'kPa(g)'],
    ['kpag', 'kPa(g)'],
    ['MPa(g)', 'MPa(g)'],
    ['J/kg/K', 'J/(kg K)'],
    ['kJ/kg·K', 'kJ/(kg K)'],
    ['Nm³/h', 'Nm3/h'],
  ])('%s reads as %s', (written, canonical) => {
    expect(canonicalUnit(written)).toBe(canonical);
  });

  it('a typographic minus sign is a minus', () => {
    expect(parseQuantity('\u22125 degC').valueSI).toBeCloseTo(268.15, 12);
  });
});

describe('round trips toSI -> fromSI for every accepted unit (common practice, no source)', () => {
  for (const unit of acceptedUnits()) {
    it(unit, () => {
      const v = 3.7;
      const si = toSI(v, unit, { ambientPressure: AMBIENT });
      // Pa(g) adds 3.7 Pa to 101325 Pa: about 1e-12 relative is lost to rounding, no more.
      expect(rel(fromSI(si, unit, { ambientPressure: AMBIENT }), v)).toBeLessThan(1e-11);
    });
  }
});

describe('errors', () => {
  it('an unknown unit lists the accepted units of the dimension asked for', () => {
    const run = () => parseQuantity('5 furlongs', { dimension: 'pressure' });
    expect(run).toThrow(UnitUnknownError);
    try {
      run();
    } catch (e) {
      const err = e as UnitUnknownError;
      expect(err.code).toBe('UNIT_UNKNOWN');
      expect(err.unit).toBe('furlongs');
      expect(err.accepted).toContain('barg');
      expect(err.accepted).not.toContain('degC');
      expect(err.message).toContain('psig');
    }
  });

  it('an unknown unit with no dimension lists all units', () => {
    try {
      toSI(1, 'cubits');
      expect.unreachable();
    } catch (e) {
      expect((e as UnitUnknownError).accepted).toEqual(acceptedUnits());
      expect((e as UnitUnknownError).accepted.length).toBeGreaterThan(40);
    }
  });

  it('bare "psi" is refused and asks for psia or psig', () => {
    try {
      parseQuantity('100 psi');
      expect.unreachable();
    } catch (e) {
      expect(e).toBeInstanceOf(UnitUnknownError);
      expect((e as UnitUnknownError).message).toMatch(/psia.*psig/);
    }
  });

  it('a unit of the wrong dimension is refused', () => {
    expect(() => toSI(5, 'degC', { dimension: 'pressure' })).toThrow(/temperature unit, not pressure/);
  });

  it('a gauge value without ambient pressure is UNIT_AMBIENT_REQUIRED, carrying the value', () => {
    try {
      parseQuantity('40 barg');
      expect.unreachable();
    } catch (e) {
      expect(e).toBeInstanceOf(AmbientPressureRequiredError);
      expect((e as AmbientPressureRequiredError).code).toBe('UNIT_AMBIENT_REQUIRED');
      expect((e as AmbientPressureRequiredError).value).toBe(40);
    }
    expect(() => fromSI(5e5, 'psig')).toThrow(AmbientPressureRequiredError);
  });

  it('impossible values are refused, never clamped', () => {
    expect(() => toSI(-300, 'degC')).toThrow(BadQuantityError);
    expect(() => toSI(-2, 'barg', { ambientPressure: AMBIENT })).toThrow(/below zero/);
    expect(() => toSI(-1, 'bara')).toThrow(BadQuantityError);
    expect(() => toSI(Number.NaN, 'K')).toThrow(BadQuantityError);
    expect(() => toSI(1, 'barg', { ambientPressure: -5 })).toThrow(BadQuantityError);
  });

  it('text that is not a quantity is UNIT_BAD_QUANTITY', () => {
    expect(() => parseQuantity('barg 40')).toThrow(BadQuantityError);
    expect(() => parseQuantity('40')).toThrow(/no unit/);
    expect(() => parseQuantity('12,5 t/h')).toThrow(/decimal point/);
  });
});

describe('normal and standard volume flow', () => {
  it('ideal-gas molar volume at 0 degC, 101.325 kPa is 22.413 97 L/mol (CODATA 2018)', () => {
    expect(idealGasMolarVolume('normal')).toBeCloseTo(22.413_969_54e-3, 11);
  });

  // R = N_A k from the two defining constants of the 2019 SI (exact; CODATA 2018 lists the same value).
  const R_SI = 6.022_140_76e23 * 1.380_649e-23; // [J/(mol K)]

  it('at 15 degC, 101.325 kPa it is R T/p = 23.645 L/mol (ideal gas, R exact in the 2019 SI)', () => {
    expect(idealGasMolarVolume('standard')).toBeCloseTo((R_SI * 288.15) / 101_325, 10);
  });

  it('1000 Nm3/h of air (M = 28.9647 g/mol) is q M p/(R T) at 0 degC, 101.325 kPa = 1292.3 kg/h (ideal gas)', () => {
    const qN = toSI(1000, 'Nm3/h');
    const mdot = normalVolumeFlowToMassFlow(qN, 0.028_964_7, 'normal');
    expect(mdot * 3600).toBeCloseTo((1000 * 0.028_964_7 * 101_325) / (R_SI * 273.15), 5);
  });

  it('Nm3/h and Sm3/h carry their reference and are not silently interchanged', () => {
    expect(volumeReference('Nm3/h')).toBe('normal');
    expect(volumeReference('Sm3/h')).toBe('standard');
    expect(volumeReference('m3/h')).toBeUndefined();
    expect(parseQuantity('100 Sm3/h').reference).toBe('standard');
    expect(() => convertUnit(100, 'Nm3/h', 'Sm3/h')).toThrow(BadQuantityError);
    expect(convertUnit(3600, 'Nm3/h', 'Nm3/s')).toBeCloseTo(1, 14);
  });

  it('a molar mass in g/mol by mistake is refused', () => {
    expect(() => normalVolumeFlowToMassFlow(1, 28.96, 'normal')).toThrow(BadQuantityError);
  });
});

describe('table', () => {
  it('every unit listed in DESIGN.md section 5 and the brief is accepted', () => {
    for (const u of [
      'bar',
      'bara',
      'bar(a)',
      'barg',
      'bar(g)',
      'kPa',
      'kPa(a)',
      'kPa(g)',
      'kPag',
      'MPa',
      'MPa(a)',
      'MPa(g)',
      'Pa',
      'psia',
      'psig',
      'mbar',
      'mbarg',
      'mmH2O',
      'inH2O',
      'atm',
      'K',
      'degC',
      '°C',
      'C',
      'degF',
      '°F',
      'F',
      'kg/s',
      'kg/h',
      't/h',
      'lb/h',
      'klb/h',
      'm3/s',
      'm3/h',
      'Nm3/h',
      'Sm3/h',
      'W',
      'kW',
      'MW',
      'hp',
      'J/kg',
      'kJ/kg',
      'J/kg/K',
      'kJ/kg/K',
      'kg/m3',
      '%',
      'fraction',
    ]) {
      expect(() => unitDimension(u)).not.toThrow();
    }
  });

  it('gauge units are exactly the (g) ones', () => {
    const gauges = acceptedUnits().filter(isGaugeUnit);
    expect(gauges).toEqual(['Pa(g)', 'kPa(g)', 'MPa(g)', 'barg', 'mbarg', 'psig']);
  });
});
