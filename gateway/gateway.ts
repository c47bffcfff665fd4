// The gateway core: numbers the counter's bins into count batches, stores each batch on disk
// before sending it, publishes at QoS 1 with a bounded window of unacknowledged batches, removes
// a batch from the queue only on its PUBACK, keeps a retained status with an offline last will,
// and executes commands from its `cmd` topic. Library, not CLI: the server starts simulated
// gateways in-process with the same code.
//
// Connections: one MQTT client per connection attempt (MQTT 3.1.1, clean session), rebuilt after
// an exponential backoff. Whatever was in flight when a connection dropped is sent again, in
// order, from the queue on the next one: the queue, not the MQTT library's memory, is the one
// record of what is delivered, and a resent batch keeps its boot, seq and t0, so the server's
// dedupe drops any copy that did arrive.
import { randomBytes } from 'node:crypto';
import type { Socket } from 'node:net';
import mqtt from 'mqtt';
import type { MqttClient } from 'mqtt';
import {
  CONTRACT_VERSION,
  DEFAULT_PREFIX,
  MAX_PAYLOAD_BYTES,
  countBatchSchema,
  gatewayIdSchema,
  statusSchema,
  topicFor,
} from '../src/lib/contract/wire.ts';
import type { GatewayStatus } from '../src/lib/contract/wire.ts';
import { CommandHandler } from './commands.ts';
import type { Bins, Counter, CounterInfo } from './counter.ts';
import { DiskQueue } from './queue.ts';
import type { QueueOptions } from './queue.ts';

export const GATEWAY_VERSION = '1.0.0';

export interface GatewayLog {
  info(message: string): void;
  warn(message: string): void;
}

export interface GatewayOptions {
  id: string;
  token: string;
  /** Broker URL, e.g. mqtt://127.0.0.1:1883. */
  url: string;
  counter: Counter;
  /** Shown in the status message's `software`, e.g. the driver's name. */
  driver: string;
  /** Directory of this gateway's on-disk queue (one directory per gateway id). */
  queueDir: string;
  queue?: QueueOptions;
  prefix?: string;
  /** Batches sent and not yet acknowledged, at most; 100 batches of 100 ms is 10 s of data. */
  maxInFlight?: number;
  /** First reconnect delay, ms; doubles per failed attempt up to `reconnectMaxMs`. */
  reconnectMinMs?: number;
  /** Longest reconnect delay, ms: 10 s keeps recovery quick after a broker restart. */
  reconnectMaxMs?: number;
  /** How long `stop()` waits for acknowledgements of what is in flight, ms. */
  drainMs?: number;
  log?: GatewayLog;
}

export interface GatewayStats {
  boot: string;
  /** `seq` the next batch gets. */
  seq: number;
  connected: boolean;
  /** Batches stored and not yet acknowledged (in flight included). */
  queued: number;
  inFlight: number;
  /** PUBLISH packets sent, resends included. */
  published: number;
  acknowledged: number;
  /** Batches the gateway refused to send (they broke the contract), or failed to store. */
  rejected: number;
  /** Batches dropped from the queue: size bound or corruption. */
  lost: number;
  connects: number;
}

export class Gateway {
  readonly boot = randomBytes(6).toString('hex');
  private readonly log: GatewayLog;
  private readonly prefix: string;
  private readonly maxInFlight: number;
  private readonly commands: CommandHandler;
  private readonly inFlight = new Set<number>();
  private readonly deliveredWaiters: (() => void)[] = [];
  private client: MqttClient | null = null;
  private connected = false;
  private retryTimer: NodeJS.Timeout | null = null;
  private attempts = 0;
  private lastError = '';
  private lastErrorAt = 0;
  private seq = 0;
  private nextToSend: number;
  private pumping = false;
  private pumpAgain = false;
  private stopping = false;
  private lastAppend: Promise<void> = Promise.resolve();
  private info: CounterInfo = { channels: [] };
  private counterEnded: (err?: Error) => void = () => undefined;
  private readonly counts = { published: 0, acknowledged: 0, rejected: 0, connects: 0 };

  /** Resolves when the counter has no more bins (end of a replayed file), with its error if any. */
  readonly ended: Promise<Error | undefined>;

  private constructor(
    private readonly opts: GatewayOptions,
    private readonly queue: DiskQueue,
  ) {
    this.log = opts.log ?? consoleLog(opts.id);
    this.prefix = opts.prefix ?? DEFAULT_PREFIX;
    this.maxInFlight = opts.maxInFlight ?? 100;
    this.nextToSend = queue.first;
    this.commands = new CommandHandler(opts.counter, () => this.info);
    this.ended = new Promise((resolve) => (this.counterEnded = resolve));
  }

  /** Opens the queue, starts the counter and connects; resolves once the counter is counting. */
  static async start(opts: GatewayOptions): Promise<Gateway> {
    gatewayIdSchema.parse(opts.id);
    if (!opts.token) throw new Error('a gateway token is needed');
    const log = opts.log ?? consoleLog(opts.id);
    const queue = await DiskQueue.open(opts.queueDir, {
      ...opts.queue,
      onLoss: (n, reason) => log.warn(`${n} queued batch(es) lost: ${reason}`),
    });
    if (queue.next > queue.first) log.info(`${queue.next - queue.first} batch(es) waiting in ${opts.queueDir} from an earlier run`);
    const gateway = new Gateway(opts, queue);
    try {
      // Bins may arrive before start() resolves; they are stored and wait for the connection.
      gateway.info = await opts.counter.start({
        bins: (bins) => gateway.enqueue(bins),
        info: (next) => gateway.updateInfo(next),
        warn: (message) => log.warn(message),
        end: (err) => gateway.counterEnded(err),
      });
    } catch (err) {
      await queue.close();
      throw err;
    }
    gateway.connect();
    return gateway;
  }

  stats(): GatewayStats {
    const q = this.queue.stats();
    return {
      boot: this.boot,
      seq: this.seq,
      connected: this.connected,
      queued: q.end - q.cursor,
      inFlight: this.inFlight.size,
      lost: q.lost,
      ...this.counts,
    };
  }

  /** Resolves once every batch stored so far has been acknowledged. */
  delivered(): Promise<void> {
    return this.lastAppend.then(
      () =>
        new Promise<void>((resolve) => {
          if (this.queue.first >= this.queue.next) resolve();
          else this.deliveredWaiters.push(resolve);
        }),
    );
  }

  /**
   * Stops the counter, stores its last bins, waits up to `drainMs` for what is in flight, marks the
   * gateway offline and disconnects. Unacknowledged batches stay queued for the next start.
   */
  async stop(): Promise<void> {
    if (this.stopping) return;
    this.stopping = true;
    await this.opts.counter.stop();
    await this.lastAppend;
    const client = this.client;
    if (client && this.connected) {
      this.pump();
      await Promise.race([this.delivered(), new Promise((r) => setTimeout(r, this.opts.drainMs ?? 2000))]);
      await client.publishAsync(this.topic('status'), JSON.stringify(this.status('offline')), { qos: 1, retain: true }).catch(() => undefined);
    }
    if (this.retryTimer) clearTimeout(this.retryTimer);
    this.retryTimer = null;
    const wasConnected = this.connected;
    this.client = null;
    this.connected = false;
    // A clean DISCONNECT, so the broker does not also publish the last will.
    if (client) await client.endAsync(!wasConnected).catch(() => undefined);
    await this.queue.close();
    this.log.info(`stopped; ${this.stats().queued} batch(es) left queued`);
  }

  private topic(kind: 'counts' | 'status' | 'cmd' | 'ack'): string {
    return topicFor(this.opts.id, kind, this.prefix);
  }

  private status(state: 'online' | 'offline'): GatewayStatus {
    const status: GatewayStatus = {
      v: CONTRACT_VERSION,
      state,
      boot: this.boot,
      channels: [...this.info.channels],
      software: `fringewise gateway ${GATEWAY_VERSION} (${this.opts.driver})`,
    };
    if (this.info.scan) status.scan = { ...this.info.scan };
    return statusSchema.parse(status);
  }

  private updateInfo(info: CounterInfo): void {
    this.info = info;
    this.log.info(`counter now reports channels ${info.channels.join(', ')}`);
    if (this.connected) this.client?.publish(this.topic('status'), JSON.stringify(this.status('online')), { qos: 1, retain: true });
  }

  /** Numbers a batch, checks it against the contract and stores it; sending follows from the queue. */
  private enqueue(bins: Bins): Promise<void> {
    // seq counts every batch made, so a batch refused here shows as a gap (possible loss) on the server.
    const batch = { v: CONTRACT_VERSION, boot: this.boot, seq: this.seq++, ...bins };
    const checked = countBatchSchema.safeParse(batch);
    const payload = checked.success ? JSON.stringify(checked.data) : '';
    if (!checked.success || Buffer.byteLength(payload) > MAX_PAYLOAD_BYTES) {
      this.counts.rejected++;
      const issue = checked.success ? 'payload above 256 KiB' : `${checked.error.issues[0]?.path.join('.')}: ${checked.error.issues[0]?.message}`;
      this.log.warn(`batch ${batch.seq} not sent, it breaks the contract: ${issue}`);
      return Promise.resolve();
    }
    const stored = this.queue.append(payload).then(
      () => this.pump(),
      (err: unknown) => {
        this.counts.rejected++;
        this.log.warn(`batch ${batch.seq} lost, the queue could not store it: ${err instanceof Error ? err.message : err}`);
      },
    );
    this.lastAppend = stored;
    return stored;
  }

  private connect(): void {
    if (this.stopping) return;
    const { id, token, url } = this.opts;
    const client = mqtt.connect(url, {
      // aedes speaks MQTT 3.1.1 only.
      protocolVersion: 4,
      clientId: id,
      username: id,
      password: token,
      clean: true,
      keepalive: 30,
      connectTimeout: 10_000,
      // Reconnection is ours (backoff, resend from the queue): each attempt is a new client.
      reconnectPeriod: 0,
      resubscribe: false,
      will: { topic: this.topic('status'), payload: Buffer.from(JSON.stringify(this.status('offline'))), qos: 1, retain: true },
    });
    this.client = client;
    client.on('connect', () => {
      if (this.client !== client) return;
      // Nagle's algorithm holds small packets for up to 40 ms; latency matters more here.
      (client.stream as Partial<Socket>).setNoDelay?.(true);
      this.connected = true;
      this.attempts = 0;
      this.counts.connects++;
      this.log.info(`connected to ${url}`);
      client.publish(this.topic('status'), JSON.stringify(this.status('online')), { qos: 1, retain: true });
      client.subscribe(this.topic('cmd'), { qos: 1 }, (err, granted) => {
        if (err || granted?.[0]?.qos === 128) this.log.warn(`the broker refused the subscription to ${this.topic('cmd')}: commands will not arrive`);
      });
      this.pump();
    });
    client.on('message', (topic, payload) => {
      if (topic !== this.topic('cmd')) return;
      const outcome = this.commands.handle(payload);
      if ('ignored' in outcome) return this.log.warn(outcome.ignored);
      if (!outcome.ack.ok) this.log.info(`command ${outcome.ack.id} refused: ${outcome.ack.error}`);
      client.publish(this.topic('ack'), JSON.stringify(outcome.ack), { qos: 1 });
    });
    client.on('error', (err) => this.noteError(err.message));
    client.on('close', () => this.disconnected(client));
  }

  private disconnected(client: MqttClient): void {
    if (this.client !== client) return;
    if (this.connected) this.log.warn('connection to the broker lost; buffering on disk');
    this.client = null;
    this.connected = false;
    // Everything not acknowledged goes again, in order, on the next connection.
    if (this.inFlight.size) this.nextToSend = Math.min(this.nextToSend, ...this.inFlight);
    this.inFlight.clear();
    client.end(true);
    if (this.stopping) return;
    const min = this.opts.reconnectMinMs ?? 250;
    const max = this.opts.reconnectMaxMs ?? 10_000;
    const delay = Math.min(max, min * 2 ** this.attempts++);
    // Jitter, so gateways that lost the same broker do not all return in the same millisecond.
    this.retryTimer = setTimeout(() => this.connect(), delay * (0.5 + Math.random() / 2));
  }

  /** Logs broker errors, but the same one at most every 30 s (a broker that stays down). */
  private noteError(message: string): void {
    const now = Date.now();
    if (message === this.lastError && now - this.lastErrorAt < 30_000) return;
    this.lastError = message;
    this.lastErrorAt = now;
    this.log.warn(`broker: ${message}`);
  }

  /** Sends queued batches while connected and the window has room; one pump at a time. */
  private pump(): void {
    if (this.pumping) {
      this.pumpAgain = true;
      return;
    }
    this.pumping = true;
    void this.pumpLoop().finally(() => {
      this.pumping = false;
      if (this.pumpAgain) {
        this.pumpAgain = false;
        this.pump();
      }
    });
  }

  private async pumpLoop(): Promise<void> {
    for (;;) {
      const client = this.client;
      this.nextToSend = Math.max(this.nextToSend, this.queue.first);
      const room = this.maxInFlight - this.inFlight.size;
      if (!client || !this.connected || room <= 0 || this.nextToSend >= this.queue.next) return;
      const records = await this.queue.read(this.nextToSend, room);
      // The connection may have dropped while reading; the next one starts from the queue again.
      if (this.client !== client || !this.connected) return;
      if (records.length === 0) {
        this.nextToSend = this.queue.next;
        continue;
      }
      for (const r of records) {
        this.nextToSend = r.index + 1;
        if (this.inFlight.has(r.index)) continue;
        this.inFlight.add(r.index);
        this.counts.published++;
        client.publish(this.topic('counts'), r.payload, { qos: 1 }, (err) => {
          if (this.client === client) this.inFlight.delete(r.index);
          if (err) return;
          this.queue.ack(r.index);
          this.counts.acknowledged++;
          if (this.deliveredWaiters.length && this.queue.first >= this.queue.next) {
            for (const resolve of this.deliveredWaiters.splice(0)) resolve();
          }
          this.pump();
        });
      }
    }
  }
}

function consoleLog(id: string): GatewayLog {
  return {
    info: (m) => console.log(`[gateway ${id}] ${m}`),
    warn: (m) => console.warn(`[gateway ${id}] ${m}`),
  };
}
