/**
 * The suite's OPC UA server (node-opcua) on a fixed port, so the plant file's endpoint holds
 * across a cut-off and restart. Every value set is logged with its source time; invented values.
 */
import { loadNodeOpcua } from '../../../services/ingest/src/opcua.js';
import type { SentLog } from './sent.js';

export interface UaServer {
  readonly endpoint: string;
  readonly up: boolean;
  start(): Promise<void>;
  /** Shuts the server down at once (sessions cut off). */
  cut(): Promise<void>;
  /** Stops publishing new values (the server stays up). */
  pause(): void;
}

type Server = InstanceType<Awaited<ReturnType<typeof loadNodeOpcua>>['OPCUAServer']>;

/**
 * A value set now reaches a client: one session is active on an open channel and has monitored
 * items. A killed process's session stays on the server until its timeout, but its channel is
 * closed with the socket, so it does not count.
 */
function listened(server: Server): boolean {
  return server.engine
    .getSessions()
    .some(
      (session) =>
        session.status === 'active' &&
        session.channel?.isOpened === true &&
        !session.channel.aborted &&
        session.publishEngine.subscriptions.some((sub) => sub.monitoredItemCount > 0),
    );
}

export async function createUaServer(options: {
  port: number;
  pkiDir: string;
  tags: readonly string[];
  periodMs: number;
  sent: SentLog;
  value: () => number;
}): Promise<UaServer> {
  const opcua = await loadNodeOpcua();
  const { OPCUAServer, OPCUACertificateManager, DataType, Variant, StatusCodes } = opcua;
  let server: InstanceType<typeof OPCUAServer> | undefined;
  let timer: NodeJS.Timeout | undefined;
  let lastTime = 0;
  const ua: UaServer = {
    endpoint: `opc.tcp://127.0.0.1:${options.port}`,
    get up() {
      return server !== undefined;
    },
    async start() {
      const s = new OPCUAServer({
        port: options.port,
        serverCertificateManager: new OPCUACertificateManager({
          rootFolder: `${options.pkiDir}/server`,
          automaticallyAcceptUnknownCertificate: true,
        }),
        userCertificateManager: new OPCUACertificateManager({
          rootFolder: `${options.pkiDir}/user`,
          automaticallyAcceptUnknownCertificate: true,
        }),
      });
      await s.initialize();
      const space = s.engine.addressSpace;
      if (space === null) throw new Error('OPC UA server has no address space');
      const ns = space.getOwnNamespace();
      const device = ns.addObject({ organizedBy: space.rootFolder.objects, browseName: 'Faultbank' });
      const variables = options.tags.map((name) =>
        ns.addVariable({
          componentOf: device,
          browseName: name,
          nodeId: `s=${name}`,
          dataType: 'Double',
          value: new Variant({ dataType: DataType.Double, value: 0 }),
        }),
      );
      const emit = () => {
        // Source times strictly increase (whole ms), so (tag, time) names one value.
        const now = Math.max(Date.now(), lastTime + 1);
        lastTime = now;
        const heard = listened(s);
        variables.forEach((v, i) => {
          const value = options.value();
          v.setValueFromSource(
            new Variant({ dataType: DataType.Double, value }),
            StatusCodes.Good,
            new Date(now),
          );
          options.sent.add({ tag: options.tags[i] ?? '', time: now, value, via: 'opcua', listened: heard });
        });
      };
      // The first value is set (and logged) before any client can read the placeholder.
      emit();
      await s.start();
      server = s;
      timer = setInterval(() => {
        emit();
      }, options.periodMs);
    },
    pause() {
      if (timer !== undefined) clearInterval(timer);
      timer = undefined;
    },
    async cut() {
      if (timer !== undefined) clearInterval(timer);
      timer = undefined;
      const s = server;
      server = undefined;
      if (s !== undefined) await s.shutdown(0);
    },
  };
  return ua;
}
