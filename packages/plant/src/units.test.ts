import { readFileSync } from 'node:fs';
import { describe, expect, it } from 'vitest';
import { parsePlantFile } from './load.js';
import { acceptedUnits, parseQuantity, unitDimension } from './units.js';

describe('plant units through the thermo unit parser', () => {
  it('knows every unit the invented demo plant uses, with its dimension', () => {
    // Units listed in services/demo/plant/harbourside.template.yaml; dimensions by definition.
    expect(
      Object.fromEntries(
        ['barg', 'mbarg', 'bara', 'degC', 't/h', 'Nm3/h', 'm3/h', 'MW', 'kW'].map((u) => [
          u,
          unitDimension(u),
        ]),
      ),
    ).toEqual({
      barg: 'gaugePressure',
      mbarg: 'gaugePressure',
      bara: 'pressure',
      degC: 'temperature',
      't/h': 'massFlow',
      'Nm3/h': 'normalVolumeFlow',
      'm3/h': 'volumeFlow',
      MW: 'power',
      kW: 'power',
    });
  });

  it('validates the demo plant template once its placeholders are filled', () => {
    const template = readFileSync(
      new URL('../../../services/demo/plant/harbourside.template.yaml', import.meta.url),
      'utf8',
    );
    const fill: Record<string, string> = {
      REFERENCE_FROM: '2026-01-01',
      REFERENCE_TO: '2026-02-01',
      OPCUA_ENDPOINT: 'opc.tcp://127.0.0.1:4840',
      DROP_FOLDER: '/tmp/drop',
    };
    const text = template.replace(/\$\{([A-Z_]+)\}/g, (_, key: string) => fill[key] ?? `missing ${key}`);
    const plant = parsePlantFile(text, 'harbourside.yaml');
    expect(plant.tags.length).toBeGreaterThan(40);
    for (const tag of plant.tags) expect(unitDimension(tag.unit), tag.unit).toBeDefined();
  });

  it('splits thermo pressure into absolute and gauge, and keeps speed and length', () => {
    expect(acceptedUnits(['gaugePressure'])).toEqual(expect.arrayContaining(['barg', 'psig', 'kPa(g)']));
    expect(acceptedUnits(['gaugePressure'])).not.toContain('bara');
    expect(acceptedUnits(['pressure'])).toEqual(expect.arrayContaining(['bara', 'psia', 'Pa']));
    expect(acceptedUnits(['pressure'])).not.toContain('barg');
    expect(unitDimension('mmH2O')).toBe('pressureDifference');
    expect(unitDimension('rpm')).toBe('speed');
    expect(unitDimension('mm')).toBe('length');
    expect(unitDimension('barr')).toBeUndefined();
    // Bare "psi" is refused by thermo as ambiguous (absolute or gauge).
    expect(unitDimension('psi')).toBeUndefined();
  });

  it('parses quantities, keeping the unit as written', () => {
    expect(parseQuantity('1.013 bara')).toEqual({ value: 1.013, unit: 'bara' });
    expect(parseQuantity('40 barg')).toEqual({ value: 40, unit: 'barg' });
    expect(parseQuantity('3000 rpm')).toEqual({ value: 3000, unit: 'rpm' });
    expect(parseQuantity('12 furlongs')).toEqual({ value: 12, unit: 'furlongs' });
    expect(parseQuantity('MW 12')).toBeUndefined();
    // Below absolute zero: thermo refuses it, so no quantity.
    expect(parseQuantity('-300 degC')).toBeUndefined();
  });
});
