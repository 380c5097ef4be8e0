/**
 * A node-opcua server that plays a small invented plant for tests and the benchmark:
 * Double variables "ns=1;s=<name>" changing on a timer, each change given an explicit
 * source timestamp and status, and recorded so a test can compare what was stored.
 */
import { loadNodeOpcua } from '../opcua.js';

export interface Published {
  readonly name: string;
  readonly value: number;
  /** Source timestamp [ms]. */
  readonly time: number;
  /** OPC UA status code value. */
  readonly status: number;
}

export interface PlantServer {
  readonly endpoint: string;
  readonly published: Published[];
  /** Starts changing every variable every periodMs [ms]. */
  play(periodMs: number): void;
  pause(): void;
  shutdown(): Promise<void>;
}

export interface PlantServerOptions {
  readonly names: readonly string[];
  readonly pkiDir: string;
  /** Keep the published list (false for the benchmark's 10,000 variables). */
  readonly record?: boolean;
  /** Every n-th change of the first variable is Uncertain, every m-th Bad (0 = never). */
  readonly uncertainEvery?: number;
  readonly badEvery?: number;
  /** Sessions the server takes at once (default 10; a PLC may take one or two). */
  readonly maxSessions?: number;
}

type NodeOpcua = Awaited<ReturnType<typeof loadNodeOpcua>>;

function newServer(opcua: NodeOpcua, options: PlantServerOptions) {
  const { OPCUAServer, OPCUACertificateManager } = opcua;
  return new OPCUAServer({
    port: 0,
    serverCertificateManager: new OPCUACertificateManager({
      rootFolder: `${options.pkiDir}/server`,
      automaticallyAcceptUnknownCertificate: true,
    }),
    userCertificateManager: new OPCUACertificateManager({
      rootFolder: `${options.pkiDir}/user`,
      automaticallyAcceptUnknownCertificate: true,
    }),
    serverCapabilities: {
      maxSessions: options.maxSessions ?? 10,
      maxMonitoredItems: 100_000,
      maxMonitoredItemsPerSubscription: 100_000,
      operationLimits: { maxMonitoredItemsPerCall: 100_000 },
    },
  });
}

/** Status of variable i at this tick: the first variable is Uncertain or Bad every so often (options). */
function statusAt(opcua: NodeOpcua, options: PlantServerOptions, i: number, tick: number) {
  const { StatusCodes } = opcua;
  const every = (n: number | undefined) => i === 0 && n !== undefined && n > 0 && tick % n === 0;
  if (every(options.badEvery)) return StatusCodes.BadSensorFailure;
  if (every(options.uncertainEvery)) return StatusCodes.UncertainLastUsableValue;
  return StatusCodes.Good;
}

export async function startPlantServer(options: PlantServerOptions): Promise<PlantServer> {
  const opcua = await loadNodeOpcua();
  const { DataType, Variant, StatusCodes } = opcua;
  const server = newServer(opcua, options);
  await server.initialize();
  const addressSpace = server.engine.addressSpace!;
  const namespace = addressSpace.getOwnNamespace();
  const device = namespace.addObject({
    organizedBy: addressSpace.rootFolder.objects,
    browseName: 'DemoPlant',
  });
  const variables = options.names.map((name) =>
    namespace.addVariable({
      componentOf: device,
      browseName: name,
      nodeId: `s=${name}`,
      dataType: 'Double',
      value: new Variant({ dataType: DataType.Double, value: 0 }),
    }),
  );
  const published: Published[] = [];
  const record = options.record ?? true;
  // The initial value, with its own source time, is a published value too.
  const t0 = Date.now();
  variables.forEach((v, i) => {
    v.setValueFromSource(
      new Variant({ dataType: DataType.Double, value: -1 }),
      StatusCodes.Good,
      new Date(t0),
    );
    if (record)
      published.push({ name: options.names[i]!, value: -1, time: t0, status: StatusCodes.Good.value });
  });
  await server.start();
  const port = server.endpoints[0]?.port ?? 0;
  let timer: NodeJS.Timeout | undefined;
  let tick = 0;
  return {
    endpoint: `opc.tcp://127.0.0.1:${port}`,
    published,
    play(periodMs) {
      timer = setInterval(() => {
        tick++;
        const now = Date.now();
        variables.forEach((v, i) => {
          // Invented demo values: a slow ramp plus the variable's index.
          const value = i * 10 + (tick % 1000) / 10;
          const status = statusAt(opcua, options, i, tick);
          v.setValueFromSource(new Variant({ dataType: DataType.Double, value }), status, new Date(now));
          if (record) published.push({ name: options.names[i]!, value, time: now, status: status.value });
        });
      }, periodMs);
    },
    pause() {
      if (timer !== undefined) clearInterval(timer);
      timer = undefined;
    },
    async shutdown() {
      if (timer !== undefined) clearInterval(timer);
      await server.shutdown(0);
    },
  };
}
