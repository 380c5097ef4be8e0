/**
 * OPC UA client source: one session per endpoint, one subscription with a monitored item
 * per configured node, each data change becoming a sample (source time, value, quality).
 * Samples go through store-and-forward (forward.ts). node-opcua is loaded on start (it
 * costs ~1.5 s and ~110 MB) and with its log level set so that it prints nothing.
 */
import type { Logger } from 'pino';
import { IngestError } from './errors.js';
import type { SourceMetrics } from './metrics.js';
import { QUALITY, type Sample } from './types.js';
import { isStorableValue } from './values.js';

export interface OpcuaItem {
  readonly tagId: number;
  /** e.g. "ns=2;s=ST1.PI-100". */
  readonly nodeId: string;
}

export interface OpcuaSourceOptions {
  readonly id: string;
  /** opc.tcp://host:port[/path] */
  readonly endpoint: string;
  readonly items: readonly OpcuaItem[];
  /** Server-side sampling interval [ms] (default 1000). */
  readonly samplingIntervalMs?: number;
  /** Subscription publishing interval [ms] (default 1000). */
  readonly publishingIntervalMs?: number;
  /** Server queue per monitored item, so fast changes between publishes are kept (default 100). */
  readonly queueSize?: number;
  readonly securityMode?: 'None' | 'Sign' | 'SignAndEncrypt';
  /** OPC UA security policy name (default Basic256Sha256 when signing, None otherwise). */
  readonly securityPolicy?: 'None' | 'Basic256Sha256' | 'Aes128_Sha256_RsaOaep' | 'Aes256_Sha256_RsaPss';
  /** Folder of the client PKI (own certificate, trusted and rejected peers). */
  readonly pkiDir: string;
  /** Accept server certificates not yet trusted (default false: move them to pkiDir/trusted/certs). */
  readonly acceptUnknownCertificates?: boolean;
  readonly certificateFile?: string;
  readonly privateKeyFile?: string;
  readonly userName?: string;
  readonly password?: string;
  /** Reconnection backoff [ms] (defaults 1,000 to 30,000). */
  readonly reconnectInitialMs?: number;
  readonly reconnectMaxMs?: number;
}

/**
 * OPC UA StatusCode to stored quality by its severity bits (OPC UA Part 4, 7.39: bits
 * 30-31 = 00 Good, 01 Uncertain, 10 Bad, 11 reserved, taken as Bad) onto OPC DA quality
 * (Good 192, Uncertain 64, Bad 0).
 */
export function qualityFromStatus(statusCode: number): number {
  const severity = statusCode >>> 30;
  if (severity === 0) return QUALITY.good;
  if (severity === 1) return QUALITY.uncertain;
  return QUALITY.bad;
}

/** A data value's payload as a number: storable numbers as they are (see values.ts), booleans as 1/0; other types are not samples. */
export function numericValue(value: unknown): number | undefined {
  if (typeof value === 'number') return isStorableValue(value) ? value : undefined;
  if (typeof value === 'boolean') return value ? 1 : 0;
  if (typeof value === 'bigint') return isStorableValue(Number(value)) ? Number(value) : undefined;
  return undefined;
}

type NodeOpcua = typeof import('node-opcua');

export async function loadNodeOpcua(): Promise<NodeOpcua> {
  process.env.NODEOPCUA_LOG_LEVEL ??= '3';
  return import('node-opcua');
}

export class OpcuaSource {
  private client: import('node-opcua').OPCUAClient | undefined;
  private session: import('node-opcua').ClientSession | undefined;
  private subscription: import('node-opcua').ClientSubscription | undefined;
  private stopped = false;
  /** Values the source could not store as samples (non-numeric, Bad without a value). */
  skippedValues = 0;

  constructor(
    private readonly o: OpcuaSourceOptions,
    private readonly onSample: (sample: Sample) => void,
    private readonly metrics: SourceMetrics,
    private readonly logger: Logger,
    private readonly clock: () => number = Date.now,
  ) {}

  /** Connects (retrying with backoff until stop()) and subscribes. */
  async start(): Promise<void> {
    const opcua = await loadNodeOpcua();
    const { OPCUAClient, OPCUACertificateManager, MessageSecurityMode, SecurityPolicy } = opcua;
    const certificateManager = new OPCUACertificateManager({
      rootFolder: this.o.pkiDir,
      automaticallyAcceptUnknownCertificate: this.o.acceptUnknownCertificates ?? false,
    });
    await certificateManager.initialize();
    const mode = MessageSecurityMode[this.o.securityMode ?? 'None'];
    const policyName =
      this.o.securityPolicy ??
      (this.o.securityMode === undefined || this.o.securityMode === 'None' ? 'None' : 'Basic256Sha256');
    const initial = this.o.reconnectInitialMs ?? 1000;
    const max = this.o.reconnectMaxMs ?? 30_000;
    const client = OPCUAClient.create({
      applicationName: 'Isentrope ingest',
      endpointMustExist: false,
      securityMode: mode,
      securityPolicy: SecurityPolicy[policyName],
      clientCertificateManager: certificateManager,
      ...(this.o.certificateFile === undefined ? {} : { certificateFile: this.o.certificateFile }),
      ...(this.o.privateKeyFile === undefined ? {} : { privateKeyFile: this.o.privateKeyFile }),
      // After a loss node-opcua reconnects by itself with this backoff (maxRetry -1: forever)
      // and restores the session and its subscription.
      connectionStrategy: { initialDelay: initial, maxDelay: max, maxRetry: -1 },
      keepSessionAlive: true,
    });
    this.client = client;
    client.on('connection_lost', () => {
      this.metrics.state = 'reconnecting';
      this.metrics.error(`connection to ${this.o.endpoint} lost`);
      this.logger.warn({ endpoint: this.o.endpoint }, 'OPC UA connection lost; reconnecting');
    });
    client.on('connection_reestablished', () => {
      this.metrics.state = 'connected';
      this.logger.info({ endpoint: this.o.endpoint }, 'OPC UA connection re-established');
    });

    // The first connection: node-opcua's own retry would never return on a dead endpoint
    // with maxRetry -1, so connect with our backoff and a bounded strategy per attempt.
    let delay = initial;
    for (;;) {
      if (this.stopped)
        throw new IngestError('INGEST_STOPPED', 'stopped before connecting', { endpoint: this.o.endpoint });
      try {
        await this.connectOnce(client);
        break;
      } catch (error) {
        this.metrics.state = 'reconnecting';
        this.metrics.error(
          `connect ${this.o.endpoint}: ${error instanceof Error ? error.message : String(error)}`,
        );
        this.logger.warn(
          { err: error, endpoint: this.o.endpoint, retryInMs: delay },
          'OPC UA connect failed',
        );
        await new Promise((r) => setTimeout(r, delay));
        delay = Math.min(delay * 2, max);
      }
    }
    await this.subscribe(opcua);
    this.metrics.state = 'connected';
  }

  private async connectOnce(client: import('node-opcua').OPCUAClient): Promise<void> {
    // connect() honours connectionStrategy; a bounded race keeps one attempt from hanging.
    const attempt = client.connect(this.o.endpoint);
    let timer: NodeJS.Timeout | undefined;
    const timeout = new Promise<never>((_, reject) => {
      timer = setTimeout(
        () =>
          reject(
            new IngestError('INGEST_OPCUA_CONNECT', `no answer from ${this.o.endpoint} within 10 s`, {
              endpoint: this.o.endpoint,
            }),
          ),
        10_000,
      );
    });
    try {
      await Promise.race([attempt, timeout]);
    } catch (error) {
      await client.disconnect().catch(() => {});
      throw error;
    } finally {
      clearTimeout(timer);
    }
    this.session = await client.createSession(
      this.o.userName === undefined
        ? undefined
        : { type: 1, userName: this.o.userName, password: this.o.password ?? '' },
    );
  }

  private async subscribe(opcua: NodeOpcua): Promise<void> {
    const { ClientSubscription, ClientMonitoredItemGroup, AttributeIds, TimestampsToReturn } = opcua;
    const session = this.session;
    if (session === undefined)
      throw new IngestError('INGEST_OPCUA_CONNECT', 'no session', { endpoint: this.o.endpoint });
    const publishing = this.o.publishingIntervalMs ?? 1000;
    const subscription = ClientSubscription.create(session, {
      requestedPublishingInterval: publishing,
      // Lifetime must be at least three keep-alives (OPC UA Part 4, 5.13.2); 10 s keep-alive.
      requestedMaxKeepAliveCount: Math.max(3, Math.ceil(10_000 / publishing)),
      requestedLifetimeCount: Math.max(30, Math.ceil(60_000 / publishing)),
      maxNotificationsPerPublish: 0,
      publishingEnabled: true,
      priority: 10,
    });
    this.subscription = subscription;
    const items = this.o.items;
    const group = ClientMonitoredItemGroup.create(
      subscription,
      items.map((i) => ({ nodeId: i.nodeId, attributeId: AttributeIds.Value })),
      {
        samplingInterval: this.o.samplingIntervalMs ?? 1000,
        discardOldest: true,
        queueSize: this.o.queueSize ?? 100,
      },
      TimestampsToReturn.Both,
    );
    group.on('changed', (_item, dataValue, index) => {
      const item = items[index];
      if (item === undefined) return;
      const value = numericValue(dataValue.value?.value);
      if (value === undefined) {
        this.skippedValues++;
        return;
      }
      const time = dataValue.sourceTimestamp ?? dataValue.serverTimestamp ?? new Date(this.clock());
      this.onSample({
        tagId: item.tagId,
        time,
        value,
        quality: qualityFromStatus(dataValue.statusCode.value),
      });
    });
    await new Promise<void>((resolve, reject) => {
      group.once('initialized', () => resolve());
      group.once('err', (message: string) =>
        reject(
          new IngestError('INGEST_OPCUA_CONNECT', `monitored items: ${message}`, {
            endpoint: this.o.endpoint,
          }),
        ),
      );
    });
  }

  async stop(): Promise<void> {
    this.stopped = true;
    await this.subscription?.terminate().catch(() => {});
    await this.session?.close().catch(() => {});
    await this.client?.disconnect().catch(() => {});
    this.metrics.state = 'stopped';
  }
}
