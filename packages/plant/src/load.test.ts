import { fileURLToPath } from 'node:url';
import { describe, expect, it } from 'vitest';
import { PlantFileError } from './errors.js';
import { formatPath, loadPlantFile, parsePlantFile } from './load.js';

const example = fileURLToPath(new URL('../examples/demo-plant.yaml', import.meta.url));

/** Runs parsePlantFile and returns the issue lines "path: message", or fails if it parsed. */
function problems(text: string): string[] {
  try {
    parsePlantFile(text, 'bad.yaml');
  } catch (err) {
    if (!(err instanceof PlantFileError)) throw err;
    expect(err.code).toBe('PLANT_FILE_INVALID');
    return err.issues.map((i) => `${i.path}: ${i.message}`);
  }
  throw new Error('expected the plant file to be rejected');
}

const minimal = (machine: string, extra = ''): string => `
version: 1
site: { id: s, name: S, timeZone: UTC, ambientPressure: 1 bara }
machines:
${machine}
${extra}`;

describe('plant file loader', () => {
  it('loads the invented demo plant and flattens nested tags onto their machine', async () => {
    const plant = await loadPlantFile(example);
    expect(plant.site.timeZone).toBe('Europe/Berlin');
    expect(plant.site.ambientPressure).toEqual({ value: 1.013, unit: 'bara', text: '1.013 bara' });
    expect(plant.machines.map((m) => m.id)).toEqual(['st-1', 'ac-1']);
    expect(plant.tags).toHaveLength(13);
    expect(plant.tags.find((t) => t.name === 'ST1.TI-100')?.machine).toBe('st-1');
    expect(plant.tags.find((t) => t.name === 'SITE.TI-AMB')?.machine).toBeUndefined();
    const st = plant.machines[0];
    // durations "30m" normalised to seconds; defaults filled
    expect(st?.bands?.onDelay).toBe(1800);
    expect(plant.machines[1]?.bands?.requireBeyondUncertainty).toBe(true);
    expect(plant.machines[1]?.outOfService).toBe(false);
  });

  it('names the path and the problem of a bad unit, listing the accepted units', () => {
    const lines = problems(
      minimal(`  - { id: p1, name: P1, kind: pump, fluid: water }
  - { id: p2, name: P2, kind: pump, fluid: water }
  - id: p3
    name: P3
    kind: pump
    fluid: water
    tags:
      - { name: P3.PI, role: inletPressure, unit: barr }`),
    );
    expect(lines).toHaveLength(1);
    expect(lines[0]).toMatch(/^machines\[2\]\.tags\[0\]\.unit: unknown unit "barr"; accepted: .*bara.*barg/);
  });

  it('rejects a unit of the wrong dimension for the role', () => {
    const lines = problems(
      minimal(
        '  - { id: p1, name: P1, kind: pump, fluid: water }',
        'tags:\n  - { name: T, machine: p1, role: inletTemperature, unit: bara }',
      ),
    );
    expect(lines).toEqual([
      expect.stringMatching(/^tags\[0\]\.unit: unit "bara" measures pressure, expected temperature/),
    ]);
  });

  it('lists every problem at once, each with its path', () => {
    const text = `
version: 1
site: { id: Bad_Site, name: S, timeZone: Mars/Olympus, ambientPressure: 1 bara }
machines:
  - { id: t1, name: T1, kind: windmill, fluid: water, keyTags: [nope] }
  - { id: t2, name: T2, kind: turbine, fluid: { composition: { CH4: 0.5, N2: 0.4 }, model: ideal } }
  - { id: t3, name: T3, kind: turbine, fluid: { composition: { CH4: 1 }, model: srk } }
  - id: t4
    name: T4
    kind: fan
    fluid: air
    bands: { warning: 3, alarm: 2, onDelay: 5 minutes }
`;
    const lines = problems(text);
    expect(lines).toEqual(
      expect.arrayContaining([
        expect.stringMatching(/^site\.id: expected a slug/),
        expect.stringMatching(/^site\.timeZone: unknown time zone "Mars\/Olympus"/),
        expect.stringMatching(/^machines\[0\]\.kind: /),
        expect.stringMatching(/^machines\[1\]\.fluid\.composition: mole fractions must sum to 1 .* 0\.9/),
        expect.stringMatching(/^machines\[2\]\.fluid\.model: /),
        expect.stringMatching(/^machines\[3\]\.bands\.onDelay: expected a duration/),
      ]),
    );
  });

  it('checks cross references after the schema: keyTags, machine ids, barometer, gauge without ambient', () => {
    const text = `
version: 1
site: { id: s, name: S, timeZone: UTC, barometerTag: BARO }
machines:
  - { id: c1, name: C1, kind: compressor, fluid: air, keyTags: [C1.X], baseline: { operatingPoint: load, reference: { from: 2026-01-01, to: 2026-02-01 } } }
  - { id: c1, name: C1 again, kind: compressor, fluid: air }
tags:
  - { name: C1.P, machine: c9, role: inletPressure, unit: barg }
  - { name: C1.P, machine: c1, role: outletPressure, unit: barg }
  - { name: BARO, role: ambientTemperature, unit: degC }
`;
    const lines = problems(text);
    expect(lines).toEqual(
      expect.arrayContaining([
        'machines[1].id: machine id "c1" is used twice',
        'tags[0].machine: no machine with id "c9"',
        'tags[1].name: tag "C1.P" is already defined at tags[0]',
        'machines[0].keyTags[0]: "C1.X" is not a tag of machine "c1"',
        expect.stringMatching(
          /^machines\[0\]\.baseline\.operatingPoint: operating point "load" needs a tag with role shaftPower/,
        ),
        'site.barometerTag: tag "BARO" has role ambientTemperature, expected ambientPressure',
      ]),
    );
  });

  it('asks for ambient pressure when a gauge tag exists and none is given', () => {
    const text = `
version: 1
site: { id: s, name: S, timeZone: UTC }
tags:
  - { name: P, role: other, unit: psig }
`;
    expect(problems(text)).toEqual([expect.stringMatching(/^site: tag "P" is in gauge unit psig/)]);
  });

  it('reports a YAML syntax error with its line', () => {
    const lines = problems('version: 1\nsite: { id: s\n');
    expect(lines[0]).toMatch(/^line \d+, column \d+: /);
  });

  it('reports an unknown key (a typo) instead of ignoring it', () => {
    const lines = problems(minimal('  - { id: p1, name: P1, kind: pump, fluid: water, outOfSevice: true }'));
    expect(lines).toEqual([expect.stringMatching(/^machines\[0\]: .*outOfSevice/)]);
  });

  it('reads an unreadable path as a typed error', async () => {
    await expect(loadPlantFile('/nonexistent/plant.yaml')).rejects.toMatchObject({
      code: 'PLANT_FILE_UNREADABLE',
    });
  });

  it('formats paths with brackets for indices and odd keys', () => {
    expect(formatPath(['machines', 2, 'tags', 0, 'unit'])).toBe('machines[2].tags[0].unit');
    expect(formatPath(['fluid', 'composition', 'C2H6-x'])).toBe('fluid.composition["C2H6-x"]');
  });
});
