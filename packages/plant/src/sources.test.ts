import { describe, expect, it } from 'vitest';
import { PlantFileError } from './errors.js';
import { parsePlantFile } from './load.js';

// Invented plant files (no numbers to check against a source: these are schema checks).
const site = { id: 'works', name: 'Works (invented)', timeZone: 'Europe/Berlin' };

describe('plant file sources', () => {
  it('takes the CSV format and the OPC UA security settings', () => {
    const plant = parsePlantFile(
      JSON.stringify({
        version: 1,
        site,
        sources: [
          {
            kind: 'csv',
            id: 'drop',
            folder: '/data/drop',
            delimiter: ';',
            decimalComma: true,
            timeFormats: ['dmy'],
          },
          {
            kind: 'opcua',
            id: 'plc',
            endpoint: 'opc.tcp://plc:4840',
            publishingInterval: 5,
            securityMode: 'SignAndEncrypt',
            certificateFile: '/etc/isentrope/client.pem',
            privateKeyFile: '/etc/isentrope/client.key',
            userName: 'historian',
            passwordEnv: 'PLC_PASSWORD',
          },
        ],
      }),
      'plant.json',
    );
    expect(plant.sources[0]).toMatchObject({ delimiter: ';', decimalComma: true, timeFormats: ['dmy'] });
    expect(plant.sources[1]).toMatchObject({ publishingInterval: 5, passwordEnv: 'PLC_PASSWORD' });
  });

  it('refuses a password written into the file in place of an environment variable name', () => {
    const text = JSON.stringify({
      version: 1,
      site,
      sources: [{ kind: 'opcua', id: 'plc', endpoint: 'opc.tcp://plc:4840', passwordEnv: 'hunter2!' }],
    });
    expect(() => parsePlantFile(text, 'plant.json')).toThrow(PlantFileError);
    expect(() => parsePlantFile(text, 'plant.json')).toThrow(
      /sources\[0\]\.passwordEnv: expected the name of an environment variable/,
    );
  });
});
