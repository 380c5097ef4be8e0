import { readFile } from 'node:fs/promises';
import { type PlantFile, parsePlantFile } from '@isentrope/plant';

const TEMPLATE = new URL('../plant/harbourside.template.yaml', import.meta.url);

export interface DemoPlantOptions {
  /** Start of the baseline reference period [epoch ms]. */
  referenceFrom: number;
  /** End of the baseline reference period [epoch ms]. */
  referenceTo: number;
  /** Folder the live CSV drops go to. */
  dropFolder: string;
  /** The OPC UA simulation server's endpoint, e.g. opc.tcp://127.0.0.1:48400. */
  opcuaEndpoint: string;
}

/** The invented demo plant's file, with its dates and addresses filled in, as text. */
export async function demoPlantText(options: DemoPlantOptions): Promise<string> {
  const template = await readFile(TEMPLATE, 'utf8');
  const values: Record<string, string> = {
    REFERENCE_FROM: new Date(options.referenceFrom).toISOString(),
    REFERENCE_TO: new Date(options.referenceTo).toISOString(),
    DROP_FOLDER: options.dropFolder,
    OPCUA_ENDPOINT: options.opcuaEndpoint,
  };
  return template.replace(/\$\{([A-Z_]+)\}/g, (_whole, key: string) => {
    const value = values[key];
    if (value === undefined) throw new Error(`demo plant template names an unknown placeholder \${${key}}`);
    return value;
  });
}

/** The invented demo plant, validated like any plant file. */
export async function demoPlant(options: DemoPlantOptions): Promise<PlantFile> {
  return parsePlantFile(await demoPlantText(options), 'demo/plant.yaml');
}
