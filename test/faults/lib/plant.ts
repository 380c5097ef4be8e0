/**
 * The suite's own plant file. INVENTED: "Faultbank test works" is no real site; its tags only
 * carry values the suite's senders make up, so every stored sample can be checked.
 */
import { writeFile } from 'node:fs/promises';

export const CSV_TAGS = ['FB.CSV-1', 'FB.CSV-2', 'FB.CSV-3'] as const;
export const PUSH_TAGS = ['FB.PUSH-1', 'FB.PUSH-2'] as const;
export const OPCUA_TAGS = ['FB.UA-1', 'FB.UA-2'] as const;
/** Tags of the bad-input files (their own, so their good rows never meet the fault run's). */
export const BAD_TAGS = ['FB.BAD-1', 'FB.BAD-2', 'FB.BAD-3'] as const;
export const OPCUA_SOURCE = 'plc';

export interface PlantPaths {
  readonly csvFolder: string;
  readonly badFolder: string;
  readonly opcuaEndpoint: string;
}

export function plantFile(paths: PlantPaths): object {
  const tag = (name: string, extra: object = {}) => ({ name, role: 'other', unit: 'bar', ...extra });
  return {
    version: 1,
    site: {
      id: 'faultbank',
      name: 'Faultbank test works (INVENTED, fault-injection suite; no real site)',
      timeZone: 'Europe/Berlin',
      ambientPressure: '1.013 bara',
    },
    machines: [
      {
        id: 'fb-p1',
        name: 'Feed pump FB-P1 (INVENTED)',
        kind: 'pump',
        fluid: 'water',
        bands: { warning: 2, alarm: 4 },
        tags: [
          { name: 'FBP1.PI-1', role: 'inletPressure', unit: 'barg' },
          { name: 'FBP1.PI-2', role: 'outletPressure', unit: 'barg' },
          { name: 'FBP1.TI-1', role: 'inletTemperature', unit: 'degC' },
          { name: 'FBP1.FI-1', role: 'massFlow', unit: 't/h' },
          { name: 'FBP1.JI-1', role: 'electricalPower', unit: 'kW' },
        ],
      },
    ],
    tags: [
      ...CSV_TAGS.map((n) => tag(n)),
      ...PUSH_TAGS.map((n) => tag(n)),
      ...OPCUA_TAGS.map((n) => tag(n, { opcua: { endpoint: OPCUA_SOURCE, nodeId: `ns=1;s=${n}` } })),
      ...BAD_TAGS.map((n) => tag(n)),
    ],
    sources: [
      { kind: 'csv', id: 'drop', folder: paths.csvFolder, layout: 'wide' },
      { kind: 'csv', id: 'bad-drop', folder: paths.badFolder, layout: 'wide' },
      {
        kind: 'opcua',
        id: OPCUA_SOURCE,
        endpoint: paths.opcuaEndpoint,
        samplingInterval: 0.2,
        publishingInterval: 0.5,
      },
    ],
  };
}

export async function writePlantFile(path: string, paths: PlantPaths): Promise<void> {
  await writeFile(path, JSON.stringify(plantFile(paths), null, 2));
}
