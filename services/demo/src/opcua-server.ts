import { mkdir } from 'node:fs/promises';
import { join } from 'node:path';

/**
 * The demo's stand-in for a compressor station's PLC: an OPC UA server (node-opcua) whose
 * variables carry the invented plant's readings, updated every second with source
 * timestamps. Only for the demo; real plants bring their own server.
 */
export interface DemoOpcuaServer {
  readonly endpoint: string;
  readonly port: number;
  /** Set a variable's value with its source time [epoch ms]. */
  update(tagName: string, value: number, sourceTime: number): void;
  stop(): Promise<void>;
}

export async function startDemoOpcuaServer(options: {
  port: number;
  tagNames: readonly string[];
  /** Folder for the server's certificates (made once, reused). */
  pkiDir: string;
}): Promise<DemoOpcuaServer> {
  // node-opcua prints warnings to stdout unless told otherwise, and it must be told before import.
  process.env.NODEOPCUA_LOG_LEVEL ??= '3';
  const opcua = await import('node-opcua');
  await mkdir(options.pkiDir, { recursive: true });
  const serverCertificateManager = new opcua.OPCUACertificateManager({
    rootFolder: join(options.pkiDir, 'server'),
    automaticallyAcceptUnknownCertificate: true,
  });
  const userCertificateManager = new opcua.OPCUACertificateManager({
    rootFolder: join(options.pkiDir, 'user'),
    automaticallyAcceptUnknownCertificate: true,
  });
  const server = new opcua.OPCUAServer({
    port: options.port,
    hostname: '127.0.0.1',
    alternateHostname: ['127.0.0.1'],
    resourcePath: '',
    serverCertificateManager,
    userCertificateManager,
    buildInfo: { productName: 'Isentrope demo plant simulator (invented)', buildNumber: '1' },
    securityModes: [opcua.MessageSecurityMode.None],
    securityPolicies: [opcua.SecurityPolicy.None],
    allowAnonymous: true,
  });
  await server.initialize();
  const addressSpace = server.engine.addressSpace;
  if (addressSpace === null) throw new Error('OPC UA demo server has no address space after initialize');
  const namespace = addressSpace.getOwnNamespace();
  const folder = namespace.addObject({
    organizedBy: addressSpace.rootFolder.objects,
    browseName: 'HarboursideDemo',
  });
  const variables = new Map<string, ReturnType<typeof namespace.addVariable>>();
  for (const name of options.tagNames) {
    const variable = namespace.addVariable({
      componentOf: folder,
      nodeId: `s=${name}`,
      browseName: name,
      dataType: 'Double',
      minimumSamplingInterval: 100,
    });
    variable.setValueFromSource(
      new opcua.Variant({ dataType: opcua.DataType.Double, value: 0 }),
      opcua.StatusCodes.UncertainInitialValue,
    );
    variables.set(name, variable);
  }
  await server.start();
  const port = options.port;
  return {
    endpoint: `opc.tcp://127.0.0.1:${port}`,
    port,
    update(tagName, value, sourceTime) {
      const variable = variables.get(tagName);
      if (variable === undefined) throw new Error(`the demo OPC UA server has no variable ${tagName}`);
      variable.setValueFromSource(
        new opcua.Variant({ dataType: opcua.DataType.Double, value }),
        opcua.StatusCodes.Good,
        new Date(sourceTime),
      );
    },
    async stop() {
      await server.shutdown(0);
    },
  };
}
